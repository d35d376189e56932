"""Writing audit results: one row per order, as CSV or JSON, and the list of bad rows.

Figures are rounded once, here, to the decimals `science.precision` declares
for them (`audit_figures`, `audit_findings`), so a row reads back as exactly
the figures `osmodose check --json` gives for it; a figure that cannot be
computed is an empty CSV cell or JSON null.  Keys are the same in CSV and
JSON, and the same as `check --json`'s (`order_id`, `volume_ml`).

CSV lines are built by pyarrow on whole columns (numbers formatted, text
quoted, columns joined) and written as bytes; each finding's message is made
once per distinct (value, limit, severity) and joined to its rows by index.
A text cell that starts with =, +, - or @ is written after a ' so that a
spreadsheet never runs it as a formula.
"""

from __future__ import annotations

import contextlib
import json
import math
from collections import deque
from collections.abc import Iterator, Sequence
from concurrent.futures import Future, ThreadPoolExecutor
from math import isnan
from pathlib import Path
from typing import Any, BinaryIO, TextIO

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from osmodose.audit.run import FIGURES, STATUS_NAMES, ChunkResult
from osmodose.check.judging import SEVERITY_NAMES
from osmodose.check.results import CAUTION, FormularyRef
from osmodose.check.rules import RuleOutcome
from osmodose.formulary.model import Formulary
from osmodose.science.precision import figure, round_finding

FINDING_SEPARATOR = ";"
MESSAGE_SEPARATOR = " | "


#: Where pyarrow's shortest form of a float is Python's repr once an integral value gets its ".0":
#: outside it (and for infinities) repr is used, value by value.
_SAME_AS_REPR = (1e-4, 1e10)


def float_text(values: np.ndarray) -> pa.Array:
    """Shortest round-trip text of each figure, as Python's repr writes it; null where it cannot be computed.

    A column whose values repeat (volumes, bag sizes, rates) is formatted once
    per distinct value, judged from its first values.
    """
    values = np.asarray(values, dtype=float)
    sample = values[:2048]
    if len(values) > 2 * len(sample) and len(np.unique(sample)) < len(sample) // 2:
        encoded = pc.dictionary_encode(pa.array(values, mask=np.isnan(values)))
        return _float_text(encoded.dictionary.to_numpy(zero_copy_only=False)).take(encoded.indices)
    return _float_text(values)


def _float_text(values: np.ndarray) -> pa.Array:
    nan = np.isnan(values)
    text = pc.cast(pa.array(values, mask=nan), pa.string())
    size = np.abs(values)
    with np.errstate(invalid="ignore"):
        alike = ((size >= _SAME_AS_REPR[0]) & (size < _SAME_AS_REPR[1])) | (size == 0)
        integral = alike & (values == np.floor(values))
    if integral.any():
        mask = pa.array(integral)
        text = pc.replace_with_mask(text, mask, pc.binary_join_element_wise(text.filter(mask), ".0", ""))
    other = np.flatnonzero(~alike & ~nan)
    if len(other):
        mask = np.zeros(len(values), dtype=bool)
        mask[other] = True
        text = pc.replace_with_mask(text, pa.array(mask), pa.array([repr(v) for v in values[other].tolist()]))
    return text


def formulary_ref(formulary: Formulary) -> dict[str, object]:
    return FormularyRef.of(formulary).model_dump(mode="json")


#: The key of an order's id in the results (CSV and JSON alike); the orders file's column is `order-id`.
ORDER_ID = "order_id"


def audit_figures(chunk: ChunkResult) -> dict[str, np.ndarray]:
    """Each figure column of a chunk, rounded as declared for its key (NaN stays NaN)."""
    return {name: figure(name, chunk.figures[name]) for name, _ in FIGURES}


def audit_findings(findings: list[dict[str, Any]]) -> list[dict[str, Any]]:
    """A row's findings with their value and limit rounded as `check --json` rounds them."""
    return [round_finding(finding) for finding in findings]


def csv_text(values: pa.Array | Sequence[str]) -> pa.Array:
    """A text column as CSV cells: formula-safe, then quoted as `csv.QUOTE_MINIMAL` would."""
    array = _formula_safe(values if isinstance(values, pa.Array) else pa.array(list(values), pa.string()))
    special = pc.match_substring_regex(array, '[,"\\r\\n]')
    if pc.any(special).as_py():
        quoted = pc.binary_join_element_wise('"', pc.replace_substring(array, '"', '""'), '"', "")
        array = pc.if_else(special, quoted, array)
    return array


class CsvResults:
    """Results as CSV: row, status, reason, agent, the figures, finding codes and their messages.

    Lines are joined by pyarrow on whole columns and written as UTF-8 bytes;
    text columns are quoted exactly as the csv module's minimal quoting
    would, so any CSV reader reads them back unchanged.  Chunks are formatted
    on `WORKERS` threads while the next chunk is read and checked (pyarrow's
    kernels release the interpreter lock), and written in their order; at
    most `WORKERS` chunks wait, so memory stays that of a few chunks.
    """

    WORKERS = 2

    def __init__(self, stream: BinaryIO, with_order_id: bool) -> None:
        self.stream = stream
        self.with_order_id = with_order_id
        self._worker = ThreadPoolExecutor(max_workers=self.WORKERS, thread_name_prefix="audit-csv")
        self._pending: deque[Future[None]] = deque()
        head = ["row", *([ORDER_ID] if with_order_id else []), "status", "reason", "agent", "tbw_method"]
        names = [*head, *(name for name, _ in FIGURES), "findings", "messages"]
        self.stream.write((",".join(names) + "\n").encode("utf-8"))

    def add(self, chunk: ChunkResult) -> None:
        while len(self._pending) >= self.WORKERS:
            self._pending.popleft().result()  # an error writing an earlier chunk surfaces here
        before = self._pending[-1] if self._pending else None
        self._pending.append(self._worker.submit(self._write, chunk, before))

    def _wait(self) -> None:
        while self._pending:
            self._pending.popleft().result()

    def _write(self, chunk: ChunkResult, before: Future[None] | None) -> None:
        lines = self._lines(chunk)
        if before is not None:
            before.result()  # the chunk before this one is written first
        if lines is not None:
            _write_strings(self.stream, lines)

    def _lines(self, chunk: ChunkResult) -> pa.Array | None:
        n = len(chunk)
        if not n:
            return None
        codes, messages = finding_columns(chunk, for_csv=True)
        status_text = pa.array([STATUS_NAMES[s] for s in range(-1, 3)], pa.string())
        reasons = np.zeros(n, dtype=np.int64)
        reason_list = [""]
        for i, reason in chunk.reasons.items():
            reasons[i] = len(reason_list)
            reason_list.append(reason)
        method = np.where(chunk.status >= 0, chunk.tbw_method, "")
        columns: list[pa.Array] = [pc.cast(pa.array(chunk.lines), pa.string())]
        if self.with_order_id:
            columns.append(csv_text(chunk.order_id if chunk.order_id is not None else [""] * n))
        columns += [
            status_text.take(pa.array(chunk.status.astype(np.int64) + 1)),
            csv_text(pa.array(reason_list, pa.string()).take(pa.array(reasons))),
            csv_text(pa.array(chunk.agent_text.tolist(), pa.string())),
            pa.array(method.tolist(), pa.string()),
        ]
        figures = audit_figures(chunk)
        columns += [float_text(figures[name]) for name, _ in FIGURES]
        # The line's end goes on its last cell: one join of the whole line, not two.
        columns += [codes, pc.binary_join_element_wise(messages, "", "\n")]
        return pc.binary_join_element_wise(*columns, ",", null_handling="replace", null_replacement="")

    def close(self) -> None:
        try:
            self._wait()
        finally:
            self._worker.shutdown(wait=True)
        self.stream.flush()

    def abandon(self) -> None:
        """The audit stopped on an error: let the chunk being written finish, whatever became of it."""
        while self._pending:
            with contextlib.suppress(Exception):
                self._pending.popleft().result()
        self._worker.shutdown(wait=True)


def _write_strings(stream: BinaryIO, strings: pa.Array) -> None:
    """The bytes of a string array's values, back to back, without copying them into Python strings."""
    _, offsets, data = strings.buffers()
    ends = np.frombuffer(offsets, dtype=np.int32)[strings.offset : strings.offset + len(strings) + 1]
    stream.write(memoryview(data)[int(ends[0]) : int(ends[-1])])


def finding_columns(chunk: ChunkResult, for_csv: bool = False) -> tuple[pa.Array, pa.Array]:
    """Each row's "code:severity" list and message list, refusals first, then in rule order (as check lists them).

    A rule's message is made once per distinct (value, limit, severity); rows
    take theirs by index, and each row's list is joined by pyarrow.  With
    `for_csv` the messages come as CSV cells: quotes doubled and the cell
    quoted where a message needs it (found once per distinct message), and a
    leading =, +, - or @ written after a '.
    """
    n = len(chunk)
    rows: list[np.ndarray] = []
    codes: list[np.ndarray] = []
    picks: list[np.ndarray] = []
    texts: list[str] = []
    code_texts: list[str] = []
    for level in (2, 1):  # refusals first; within a severity, rules in their order
        for outcome in chunk.outcomes:
            fired = np.flatnonzero(outcome.severity == level)
            if not len(fired):
                continue
            name = SEVERITY_NAMES[level]
            if outcome.extra is not None:  # words from more of the row than (value, limit): one message each
                pick = len(texts) + np.arange(len(fired))
                texts += [outcome.message(k) for k in fired.tolist()]
            else:
                pick = _message_picks(outcome, fired, name, texts)
            picks.append(pick)
            codes.append(np.full(len(fired), len(code_texts)))
            code_texts.append(f"{outcome.code}:{name}")
            rows.append(fired)
    if not rows:
        empty = pa.array([""] * n, pa.string())
        return empty, empty
    row = np.concatenate(rows)
    order = np.argsort(row, kind="stable")
    offsets = pa.array(np.concatenate([[0], np.cumsum(np.bincount(row, minlength=n))]).astype(np.int32))
    picked = np.concatenate(picks)[order]
    special = np.zeros(0, dtype=bool)
    if for_csv:
        special = np.fromiter((any(mark in t for mark in _SPECIAL) for t in texts), dtype=bool, count=len(texts))
        texts = [t.replace('"', '""') if quoted else t for t, quoted in zip(texts, special.tolist(), strict=True)]
    message = pa.array(texts, pa.string()).take(pa.array(picked))
    code = pa.array(code_texts, pa.string()).take(pa.array(np.concatenate(codes)[order]))
    joined = pc.binary_join(pa.ListArray.from_arrays(offsets, message), MESSAGE_SEPARATOR)
    if for_csv:
        joined = _formula_safe(joined)
        quote = np.bincount(row[order], weights=special[picked], minlength=n) > 0
        if quote.any():
            mask = pa.array(quote)
            wrapped = pc.binary_join_element_wise('"', joined.filter(mask), '"', "")
            joined = pc.replace_with_mask(joined, mask, wrapped)
    return pc.binary_join(pa.ListArray.from_arrays(offsets, code), FINDING_SEPARATOR), joined


def _message_picks(outcome: RuleOutcome, fired: np.ndarray, severity: str, texts: list[str]) -> np.ndarray:
    """Each fired row's index into `texts`, to which each distinct (value, limit) message is added once."""
    pick = np.empty(len(fired), dtype=np.int64)
    limits = outcome.limit[fired]
    values = outcome.value[fired]
    # Limits take a few values (one per agent at most): distinct values within each.
    for limit in np.unique(limits).tolist():
        same = np.isnan(limits) if math.isnan(limit) else limits == limit
        distinct, inverse = np.unique(values[same], return_inverse=True)
        pick[same] = len(texts) + inverse.reshape(-1)
        texts += [outcome.describe(value, limit, severity) for value in distinct.tolist()]
    return pick


#: A CSV cell with one of these is quoted (the csv module's minimal quoting).
_SPECIAL = (",", '"', "\n", "\r")


def _formula_safe(array: pa.Array) -> pa.Array:
    """Cells a spreadsheet would run as a formula (=, +, -, @ first) written after a '."""
    formula = pc.match_substring_regex(array, "^[=+\\-@]")
    if pc.any(formula).as_py():
        array = pc.if_else(formula, pc.binary_join_element_wise("'", array, ""), array)
    return array


def row_dicts(chunk: ChunkResult) -> Iterator[dict[str, object]]:
    """Each row as a JSON object: the names and values of `check --json`, flattened."""
    found = chunk.findings()
    figures = {name: column.tolist() for name, column in audit_figures(chunk).items()}
    order_id = None if chunk.order_id is None else chunk.order_id.to_pylist()
    for i in range(len(chunk)):
        status = STATUS_NAMES[int(chunk.status[i])]
        row: dict[str, object] = {"row": int(chunk.lines[i])}
        if order_id is not None:
            row[ORDER_ID] = order_id[i]
        row["status"] = status
        row["reason"] = chunk.reasons.get(i)
        row["agent"] = str(chunk.agent_text[i]) or None
        row["tbw_method"] = None if status == "error" else str(chunk.tbw_method[i])
        for name, _ in FIGURES:
            value = figures[name][i]
            row[name] = None if isnan(value) else value  # NaN: cannot be computed
        row["findings"] = audit_findings(found.get(i, []))
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
