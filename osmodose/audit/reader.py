"""Reading an orders file in chunks of rows, with the stdlib csv module.

Rows are read a chunk at a time so memory stays bounded by the chunk, not the
file.  Each chunk comes out as text columns (one tuple of cells per header
column) with each row's line number in the file (the header is line 1, as a
spreadsheet numbers it); blank lines are skipped.  A row with the wrong
number of fields is kept as a bad row, with its reason, and its cells blanked.
"""

from __future__ import annotations

import csv
import gc
import os
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from osmodose.audit.columns import Header, parse_header
from osmodose.errors import OrdersFileError


@dataclass(frozen=True)
class RawChunk:
    """Consecutive rows of an orders file as text columns."""

    lines: np.ndarray
    cells: dict[str, tuple[str, ...]]
    #: Position in the chunk -> why the row cannot be read at all.
    problems: dict[int, str] = field(default_factory=dict)

    def __len__(self) -> int:
        return len(self.lines)


class OrdersFile:
    """An open orders file: its header, its chunks of rows, and how far reading has got."""

    def __init__(self, path: Path, handle: object) -> None:
        self.path = path
        self._handle = handle
        self._size = max(os.path.getsize(path), 1)
        self._reader = csv.reader(handle)  # type: ignore[arg-type]
        try:
            first = next(self._reader)
        except StopIteration:
            raise OrdersFileError(path, "is empty: it needs a header row naming its columns") from None
        except csv.Error as error:
            raise OrdersFileError(path, f"has a header osmodose cannot read as CSV ({error})") from None
        self.header: Header = parse_header(path, first)

    def fraction_read(self) -> float:
        """Share of the file's bytes read so far (for a progress bar)."""
        return min(1.0, self._handle.buffer.tell() / self._size)  # type: ignore[attr-defined]

    def chunks(self, rows: int) -> Iterator[RawChunk]:
        """Chunks of at most `rows` rows until the end of the file."""
        width = self.header.width
        names = list(self.header.columns)
        indexes = [self.header.columns[name].index for name in names]
        reader = self._reader
        while True:
            lines: list[int] = []
            records: list[list[str]] = []
            problems: dict[int, str] = {}
            blank = [""] * width
            previous = reader.line_num
            try:
                for record in reader:
                    if not record or (len(record) == 1 and not record[0].strip()):
                        previous = reader.line_num
                        continue
                    if len(record) != width:
                        problems[len(records)] = f"has {len(record)} fields where the header has {width}"
                    lines.append(previous + 1)
                    records.append(record if len(record) == width else blank)
                    previous = reader.line_num
                    if len(records) >= rows:
                        break
            except csv.Error as error:
                raise OrdersFileError(self.path, f"line {reader.line_num} cannot be read as CSV ({error})") from None
            if not records:
                return
            columns = list(zip(*records, strict=True))
            yield RawChunk(
                lines=np.asarray(lines, dtype=np.int64),
                cells={name: columns[index] for name, index in zip(names, indexes, strict=True)},
                problems=problems,
            )


@contextmanager
def open_orders(path: Path | str) -> Iterator[OrdersFile]:
    """Open an orders file (UTF-8, a byte-order mark allowed); undecodable bytes become U+FFFD.

    The collector is paused while rows are read: the rows are millions of
    short-lived strings, and collecting them repeatedly doubles the reading
    time without freeing anything.
    """
    path = Path(path)
    try:
        handle = open(path, encoding="utf-8-sig", errors="replace", newline="")  # noqa: SIM115
    except OSError as error:
        raise OrdersFileError(path, f"cannot be read ({error.strerror})") from None
    was_enabled = gc.isenabled()
    gc.disable()
    try:
        with handle:
            yield OrdersFile(path, handle)
    finally:
        if was_enabled:
            gc.enable()
