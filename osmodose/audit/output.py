"""Writing audit results: one row per order, as CSV or JSON, and the list of bad rows.

Figures are rounded once, here, to the decimals `science.precision` declares
for them (`audit_figures`, `audit_findings`), so a row reads back as exactly
the figures `osmodose check --json` gives for it; a figure that cannot be
computed is an empty CSV cell or JSON null.  Keys are the same in CSV and
JSON, and the same as `check --json`'s (`order_id`, `volume_ml`).

CSV lines are built by pyarrow on whole columns (`csv_cells`: figures looked
up, text quoted, each finding's message made once per distinct value) and
written as bytes.
"""

from __future__ import annotations

import contextlib
import json
import os
import stat
from collections import deque
from collections.abc import Iterator
from concurrent.futures import Future, ThreadPoolExecutor
from math import isnan
from pathlib import Path
from typing import Any, BinaryIO, TextIO

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from osmodose.audit.csv_cells import Messages, RoundedText, csv_text, finding_columns
from osmodose.audit.run import FIGURES, STATUS_NAMES, ChunkResult
from osmodose.check.results import CAUTION, FormularyRef
from osmodose.formulary.model import Formulary
from osmodose.science.precision import FIGURE_DECIMALS, figure, round_finding


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
        self._disk = _regular_file(stream)
        self._messages = Messages()
        self._figure_text = {d: RoundedText(d) for d in sorted({FIGURE_DECIMALS[name] for name, _ in FIGURES})}
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
            self._start_writeback()

    def _start_writeback(self) -> None:
        """Let the system start putting the rows written so far on disk while the next chunks are worked out.

        A results file is made durable (fsync) before it takes its name; begun
        chunk by chunk, that write no longer waits until the end.  Only a hint:
        a stream that is not a regular file, or a system without it, skips it.
        """
        if self._disk is None:
            return
        try:
            self.stream.flush()
            os.posix_fadvise(self._disk, 0, 0, os.POSIX_FADV_DONTNEED)
        except OSError:
            self._disk = None

    def _lines(self, chunk: ChunkResult) -> pa.Array | None:
        n = len(chunk)
        if not n:
            return None
        codes, messages = finding_columns(chunk, for_csv=True, end="\n", made=self._messages)
        columns: list[pa.Array] = [pc.cast(pa.array(chunk.lines), pa.string())]
        if self.with_order_id:
            columns.append(csv_text(chunk.order_id if chunk.order_id is not None else [""] * n))
        columns.append(_status_cells(chunk))
        figures = audit_figures(chunk)
        columns += [self._figure_text[FIGURE_DECIMALS[name]].column(figures[name]) for name, _ in FIGURES]
        columns += [codes, messages]  # the line's end is on its last cell
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


def _regular_file(stream: BinaryIO) -> int | None:
    """The descriptor of a stream that writes to a regular file (where writeback can be started early), or None."""
    if not hasattr(os, "posix_fadvise"):
        return None
    try:
        fd = stream.fileno()
        return fd if stat.S_ISREG(os.fstat(fd).st_mode) else None
    except (OSError, AttributeError, ValueError):
        return None


def _status_cells(chunk: ChunkResult) -> pa.Array:
    """The cells status,reason,agent,tbw_method of each row, as one column.

    An audited row's four cells follow from its status, agent cell and method:
    each combination is written once and taken by index.  A bad row (status
    error, its reason, its agent cell, no method) is written alone.
    """
    agents = csv_text(chunk.agent_ids).to_pylist()
    combined = [
        f"{STATUS_NAMES[status]},,{agent},{method}"
        for status in (0, 1, 2)
        for agent in agents
        for method in ("fraction", "watson")
    ]
    key = (np.maximum(chunk.status, 0).astype(np.int64) * len(agents) + chunk.agent_codes) * 2 + chunk.use_watson
    cells = pa.array(combined, pa.string()).take(pa.array(key))
    if not chunk.reasons:
        return cells
    bad = np.zeros(len(chunk), dtype=bool)
    bad[list(chunk.reasons)] = True
    reasons = dict(zip(chunk.reasons, csv_text(list(chunk.reasons.values())).to_pylist(), strict=True))
    alone = [f"{STATUS_NAMES[-1]},{reasons[i]},{agents[chunk.agent_codes[i]]}," for i in np.flatnonzero(bad).tolist()]
    return pc.replace_with_mask(cells, pa.array(bad), pa.array(alone, pa.string()))


def _write_strings(stream: BinaryIO, strings: pa.Array) -> None:
    """The bytes of a string array's values, back to back, without copying them into Python strings."""
    _, offsets, data = strings.buffers()
    ends = np.frombuffer(offsets, dtype=np.int32)[strings.offset : strings.offset + len(strings) + 1]
    stream.write(memoryview(data)[int(ends[0]) : int(ends[-1])])


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
        row["agent"] = chunk.agent_ids[chunk.agent_codes[i]] or None
        row["tbw_method"] = None if status == "error" else ("watson" if chunk.use_watson[i] else "fraction")
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
