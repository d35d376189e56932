"""Writing audit results: one row per order, as CSV or JSON, and the list of bad rows.

Figures are written in full precision (Python's shortest round-trip form), so
a row reads back as exactly the figures `osmodose check --json` gives for it;
a figure that cannot be computed is an empty CSV cell or JSON null.
"""

from __future__ import annotations

import json
from collections.abc import Iterator
from math import isnan
from pathlib import Path
from typing import TextIO

import numpy as np

from osmodose.audit.run import FIGURES, STATUS_NAMES, ChunkResult
from osmodose.check.judging import SEVERITY_NAMES
from osmodose.check.results import CAUTION, FormularyRef
from osmodose.formulary.model import Formulary

FINDING_SEPARATOR = ";"
MESSAGE_SEPARATOR = " | "


def _numbers(values: np.ndarray) -> list[str]:
    """Shortest round-trip text of each figure; "" where it cannot be computed.

    Each distinct value is formatted once (volumes, bag sizes and weights
    repeat a lot): sorting is cheaper than formatting a float again.
    """
    distinct, index = np.unique(values, return_inverse=True)
    text = np.asarray([repr(v) for v in distinct.tolist()], dtype=object)[index.reshape(-1)].tolist()
    for i in np.flatnonzero(np.isnan(values)).tolist():
        text[i] = ""
    return text


def formulary_ref(formulary: Formulary) -> dict[str, str]:
    return FormularyRef.of(formulary).model_dump(mode="json")


#: A CSV field with one of these is quoted (the csv module's minimal quoting).
_SPECIAL = (",", '"', "\n", "\r")


def _quoted(values: list[str] | tuple[str, ...]) -> list[str] | tuple[str, ...]:
    """A text column quoted as `csv.QUOTE_MINIMAL` would; most columns need nothing, checked at once."""
    joined = "".join(values)
    if not any(mark in joined for mark in _SPECIAL):
        return values
    return ['"' + v.replace('"', '""') + '"' if _special(v) else v for v in values]


def _special(value: str) -> bool:
    return "," in value or '"' in value or "\n" in value or "\r" in value


class CsvResults:
    """Results as CSV: row, status, reason, agent, the figures, finding codes and their messages.

    Lines are joined here rather than by the csv module (ten times faster for
    a million rows); text columns are quoted exactly as its minimal quoting
    would, so any CSV reader reads them back unchanged.
    """

    def __init__(self, stream: TextIO, with_order_id: bool) -> None:
        self.stream = stream
        self.with_order_id = with_order_id
        head = ["row", *(["order-id"] if with_order_id else []), "status", "reason", "agent", "tbw_method"]
        self._write([[name] for name in [*head, *(name for name, _ in FIGURES), "findings", "messages"]])

    def _write(self, columns: list[list[str] | tuple[str, ...]]) -> None:
        self.stream.write("\n".join(map(",".join, zip(*columns, strict=True))) + "\n")

    def add(self, chunk: ChunkResult) -> None:
        n = len(chunk)
        codes, messages = [""] * n, [""] * n
        for i, items in _finding_texts(chunk).items():
            items.sort(key=lambda item: not item[0])  # refusals first, as check lists them
            codes[i] = FINDING_SEPARATOR.join(code for _, code, _ in items)
            messages[i] = MESSAGE_SEPARATOR.join(message for _, _, message in items)
        reasons = [""] * n
        for i, reason in chunk.reasons.items():
            reasons[i] = reason
        status = np.asarray([STATUS_NAMES[s] for s in range(-1, 3)])[chunk.status.astype(int) + 1].tolist()
        method = np.where(chunk.status >= 0, chunk.tbw_method, "").tolist()
        columns: list[list[str] | tuple[str, ...]] = [chunk.lines.astype(str).tolist()]
        if self.with_order_id:
            columns.append(_quoted(chunk.order_id or ("",) * n))
        columns += [status, _quoted(reasons), _quoted([str(a) for a in chunk.agent_text.tolist()]), method]
        columns += [_numbers(chunk.figures[name]) for name, _ in FIGURES]
        columns += [codes, _quoted(messages)]
        self._write(columns)

    def close(self) -> None:
        self.stream.flush()


def _finding_texts(chunk: ChunkResult) -> dict[int, list[tuple[bool, str, str]]]:
    """Position -> (refused, "code:severity", message) per finding, in rule order (CSV needs no more)."""
    found: dict[int, list[tuple[bool, str, str]]] = {}
    for outcome in chunk.outcomes:
        severity = outcome.severity
        fired = np.flatnonzero(severity)
        if not len(fired):
            continue
        # The rule's own message, made once per distinct (value, limit, severity): values repeat.
        memo: dict[tuple[float, float, int], tuple[bool, str, str]] = {}
        for k, value, limit, level in zip(
            fired.tolist(),
            outcome.value[fired].tolist(),
            outcome.limit[fired].tolist(),
            severity[fired].tolist(),
            strict=True,
        ):
            item = memo.get((value, limit, level))
            if item is None:
                name = SEVERITY_NAMES[level]
                item = (name == "refuse", f"{outcome.code}:{name}", outcome.describe(value, limit, name))
                memo[(value, limit, level)] = item
            found.setdefault(k, []).append(item)
    return found


def row_dicts(chunk: ChunkResult) -> Iterator[dict[str, object]]:
    """Each row as a JSON object: the names and values of `check --json`, flattened."""
    found = chunk.findings()
    figures = {name: chunk.figures[name].tolist() for name, _ in FIGURES}
    for i in range(len(chunk)):
        status = STATUS_NAMES[int(chunk.status[i])]
        row: dict[str, object] = {"row": int(chunk.lines[i])}
        if chunk.order_id is not None:
            row["order_id"] = chunk.order_id[i]
        row["status"] = status
        row["reason"] = chunk.reasons.get(i)
        row["agent"] = str(chunk.agent_text[i]) or None
        row["tbw_method"] = None if status == "error" else str(chunk.tbw_method[i])
        for name, _ in FIGURES:
            value = figures[name][i]
            row[name] = None if isnan(value) else value  # NaN: cannot be computed
        row["findings"] = found.get(i, [])
        yield row


class JsonResults:
    """Results as one JSON object, written as it goes: formulary, caution and the rows."""

    def __init__(self, stream: TextIO, formulary: Formulary) -> None:
        self.stream = stream
        self.first = True
        head = json.dumps({"formulary": formulary_ref(formulary), "caution": CAUTION})
        stream.write(head[:-1] + ', "rows": [\n')

    def add(self, chunk: ChunkResult) -> None:
        for row in row_dicts(chunk):
            self.stream.write(("" if self.first else ",\n") + json.dumps(row))
            self.first = False

    def close(self) -> None:
        self.stream.write("\n]}\n")
        self.stream.flush()


class BadRows:
    """Reports bad rows on a stream, one line each, up to `limit`; counts them all."""

    def __init__(self, stream: TextIO, path: Path | str, limit: int = 20) -> None:
        self.stream, self.path, self.limit, self.count = stream, path, limit, 0

    def add(self, chunk: ChunkResult) -> None:
        for i in sorted(chunk.reasons):
            self.count += 1
            if self.count <= self.limit:
                self.stream.write(f"osmodose: {self.path} row {int(chunk.lines[i])}: {chunk.reasons[i]}\n")

    def close(self) -> None:
        if self.count > self.limit:
            more = self.count - self.limit
            self.stream.write(f"osmodose: {self.path}: {more} more bad rows (each has its reason in the results)\n")
