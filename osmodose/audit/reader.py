"""Reading an orders file in chunks of rows: CSV with pyarrow's multi-threaded parser, or Parquet.

The file is read a block of bytes at a time (memory stays that of a block,
whatever the file's length) and each block, cut at a record's end, is parsed
by pyarrow's CSV reader into string columns.  `scan` finds where records end
and on which line each starts (the header is line 1, as a spreadsheet numbers
them; blank lines are skipped), so row numbers stay those of the file.

A row that cannot be read is a bad row with its reason, never the end of the
audit: a wrong number of fields, a cell over `MAX_CELL_CHARS` characters, a
quote that is never closed (reported at the line where its record starts;
reading goes on at the next line).  The file itself is refused before any row
when it is not a regular file (standard input, `-`, excepted), is over
`MAX_FILE_BYTES`, or is not UTF-8 (or the `--encoding` given).  A `.parquet`
file is read by row groups, its columns as text, rows numbered from 1.
"""

from __future__ import annotations

import codecs
import csv
import io
import os
import stat
import sys
from collections.abc import Iterator, Sequence
from contextlib import contextmanager
from dataclasses import dataclass, field
from pathlib import Path
from typing import BinaryIO

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.csv as pacsv

from osmodose.audit.columns import Header, parse_header
from osmodose.audit.scan import Records, field_counts, find_records, is_blank
from osmodose.errors import OrdersFileError

#: The largest orders file read (documented in docs/audit.md): about 25 million orders.
MAX_FILE_BYTES = 2 * 1024**3
#: A cell longer than this makes its row bad (the csv module's old field limit).
MAX_CELL_CHARS = 131_072
#: A record (one row, its quoted newlines included) longer than this is bad: an unclosed quote, most likely.
MAX_RECORD_BYTES = 4 * 1024**2
#: Bytes read and parsed at a time.
BLOCK_BYTES = 8 * 1024**2
#: Bytes read at a time for the header (its records are found before the first block is read whole).
HEADER_BYTES = 64 * 1024
#: How standard input is named in messages.
STDIN = "<stdin>"


class TextColumn(Sequence[str]):
    """One column's cells: a pyarrow string array, read as Python strings only when asked one by one."""

    def __init__(self, array: pa.Array) -> None:
        self.array = array
        self._list: list[str] | None = None

    def __len__(self) -> int:
        return len(self.array)

    def __getitem__(self, index):  # type: ignore[no-untyped-def]
        if self._list is None:
            self._list = self.array.to_pylist()
        return self._list[index]

    def __iter__(self) -> Iterator[str]:
        return iter(self[:])


@dataclass(frozen=True)
class RawChunk:
    """Consecutive rows of an orders file as text columns."""

    lines: np.ndarray
    cells: dict[str, TextColumn]
    #: Position in the chunk -> why the row cannot be read at all (its cells are empty).
    problems: dict[int, str] = field(default_factory=dict)

    def __len__(self) -> int:
        return len(self.lines)


def _size(limit: int) -> str:
    for unit, size in (("GiB", 1024**3), ("MiB", 1024**2)):
        if limit >= size and limit % size == 0:
            return f"{limit // size} {unit}"
    return f"{limit} bytes"


def _is_regular(path: Path) -> os.stat_result:
    try:
        status = path.stat()
    except OSError as error:
        raise OrdersFileError(path, f"cannot be read ({error.strerror})") from None
    if not stat.S_ISREG(status.st_mode):
        raise OrdersFileError(path, "is not a regular file (to read from a pipe, give - and pipe it to stdin)")
    if status.st_size > MAX_FILE_BYTES:
        raise OrdersFileError(path, f"is larger than an orders file may be ({_size(MAX_FILE_BYTES)})")
    return status


class _Bytes:
    """The file's bytes as UTF-8, a block at a time: checked, or transcoded from `encoding`."""

    def __init__(self, path: Path, handle: BinaryIO, encoding: str | None) -> None:
        self.path, self.handle, self.read_bytes = path, handle, 0
        self.decoder = None if encoding is None else codecs.getincrementaldecoder(encoding)(errors="strict")
        self.first = True

    def read(self, size: int, first_line: int, pending: bytes) -> bytes:
        raw = self.handle.read(size)
        self.read_bytes += len(raw)
        if self.read_bytes > MAX_FILE_BYTES:
            raise OrdersFileError(self.path, f"is larger than an orders file may be ({_size(MAX_FILE_BYTES)})")
        if self.decoder is not None:
            try:
                text = self.decoder.decode(raw, final=not raw)
            except UnicodeDecodeError as error:
                raise OrdersFileError(self.path, f"cannot be read as {error.encoding} ({error.reason})") from None
            data = text.encode("utf-8")
        else:
            data = raw
            if not data.isascii() or (not raw and not pending.isascii()):
                _check_utf8(self.path, pending, data, first_line, final=not raw)
        if self.first:
            self.first = False
            data = data.removeprefix(codecs.BOM_UTF8)
        return data


def _check_utf8(path: Path, pending: bytes, data: bytes, first_line: int, final: bool = False) -> None:
    """UTF-8 or an error naming the line (a character cut by the block's end is left for the next)."""
    whole = pending + data
    try:
        whole.decode("utf-8")
    except UnicodeDecodeError as error:
        if not final and error.reason == "unexpected end of data" and error.start >= len(whole) - 3:
            return
        line = first_line + whole.count(b"\n", 0, error.start)
        raise OrdersFileError(path, _utf8_problem(line, whole[error.start])) from None


def _check_file_utf8(path: Path) -> None:
    """A regular file is checked whole before any row is audited, so a bad byte stops the audit before any output.

    ASCII blocks (the usual export) cost next to nothing; lines are counted only to name a bad one.
    """
    offset, carry = 0, b""  # the file offset at which `carry` starts
    try:
        with open(path, "rb") as handle:
            while block := handle.read(BLOCK_BYTES):
                whole = carry + block
                if whole.isascii():
                    offset, carry = offset + len(whole), b""
                    continue
                try:
                    whole.decode("utf-8")
                    offset, carry = offset + len(whole), b""
                except UnicodeDecodeError as error:
                    if error.reason == "unexpected end of data" and error.start >= len(whole) - 3:
                        offset, carry = offset + error.start, whole[error.start :]
                        continue
                    _not_utf8(path, handle, offset + error.start, whole[error.start])
    except OSError as error:
        raise OrdersFileError(path, f"cannot be read ({error.strerror})") from None
    if carry:
        with open(path, "rb") as handle:
            _not_utf8(path, handle, offset, carry[0])


def _not_utf8(path: Path, handle: BinaryIO, position: int, byte: int) -> None:
    """The error for the byte at `position`, naming its line (counted by reading the file up to it)."""
    handle.seek(0)
    line, left = 1, position
    while left > 0:
        block = handle.read(min(left, BLOCK_BYTES))
        if not block:
            break
        line += block.count(b"\n")
        left -= len(block)
    raise OrdersFileError(path, _utf8_problem(line, byte))


def _utf8_problem(line: int, byte: int) -> str:
    return (
        f"line {line} is not UTF-8 text (byte 0x{byte:02x}): give the file's encoding with --encoding, "
        "e.g. --encoding latin-1"
    )


def _csv_options(names: list[str], block_size: int, quoted_newlines: bool, invalid: list[int]) -> tuple:
    def on_invalid(_row: object) -> str:
        invalid.append(1)
        return "skip"

    read = pacsv.ReadOptions(column_names=names, use_threads=True, block_size=block_size)
    parse = pacsv.ParseOptions(newlines_in_values=quoted_newlines, invalid_row_handler=on_invalid)
    convert = pacsv.ConvertOptions(
        column_types=dict.fromkeys(names, pa.string()), strings_can_be_null=False, quoted_strings_can_be_null=False
    )
    return read, parse, convert


class OrdersFile:
    """An open orders file: its header, its chunks of rows, and how far reading has got."""

    def __init__(self, path: Path, handle: BinaryIO, size: int | None, encoding: str | None) -> None:
        self.path, self._handle, self._size = path, handle, size
        self._source = _Bytes(path, handle, encoding)
        self._pending = b""
        self._line = 1
        self._eof = False
        self._skip_line = False  # inside an over-long line being skipped
        header = self._header()
        self.header: Header = parse_header(path, header)
        self._names = [f"c{i}" for i in range(self.header.width)]

    def _fill(self, size: int | None = None) -> None:
        data = self._source.read(BLOCK_BYTES if size is None else size, self._line, self._pending)
        if not data:
            self._eof = True
        self._pending += data

    def _header(self) -> list[str]:
        while True:
            self._fill(min(HEADER_BYTES, BLOCK_BYTES))
            records = find_records(self._pending, 1, final=self._eof)
            if len(records.starts):
                break
            if self._eof:
                raise OrdersFileError(self.path, "is empty: it needs a header row naming its columns")
            if len(self._pending) > MAX_RECORD_BYTES:
                raise OrdersFileError(self.path, "has a header osmodose cannot read as CSV (it never ends)")
        text = self._pending[records.starts[0] : records.ends[0]].decode("utf-8")
        fields = next(csv.reader([text]), [])
        if not text.strip():
            raise OrdersFileError(self.path, "is empty: it needs a header row naming its columns")
        end = int(records.starts[1]) if len(records.starts) > 1 else records.used
        self._line = 1 + self._pending.count(b"\n", 0, end)
        self._pending = self._pending[end:]
        return fields

    def fraction_read(self) -> float:
        """Share of the file's bytes read so far (for a progress bar); 0 when the size is not known."""
        if not self._size:
            return 0.0
        return min(1.0, self._source.read_bytes / self._size)

    def chunks(self, rows: int) -> Iterator[RawChunk]:
        """Chunks of at most `rows` rows until the end of the file."""
        while True:
            if not self._eof and len(self._pending) < BLOCK_BYTES:
                self._fill()
            block, first_line = self._pending, self._line
            records = find_records(block, first_line, final=self._eof)
            problems: dict[int, str] = {}
            if not len(records.starts):
                if self._eof:
                    return
                if len(block) > MAX_RECORD_BYTES:
                    yield self._too_long(block, first_line)
                else:
                    self._fill()  # a record longer than what is read so far
                continue
            self._pending = block[records.used :]
            self._line = first_line + records.newlines
            if self._eof and not self._pending and b'"' in block:
                records, problems, tail = _unclosed_at_end(block, records)
                if tail is not None:
                    self._pending, self._line = tail
            table, lines, problems = _parse(block, records, self._names, problems)
            # A cell has no more characters than its record has bytes: most blocks need no cell measured.
            long_cells = len(records.ends) > 0 and int((records.ends - records.starts).max()) > MAX_CELL_CHARS
            for start in range(0, len(lines), rows):
                stop = min(start + rows, len(lines))
                yield _chunk(table, lines, problems, start, stop, self.header, long_cells)

    def _too_long(self, block: bytes, first_line: int) -> RawChunk:
        """A record longer than MAX_RECORD_BYTES: a bad row at its line; reading goes on at the next line."""
        quoted = b'"' in block and block.count(b'"') % 2 == 1
        reason = (
            'has a quote (") that is never closed'
            if quoted
            else f"is longer than a row may be ({_size(MAX_RECORD_BYTES)})"
        )
        end = block.find(b"\n")
        while end < 0 and not self._eof:  # one line longer than the block: skip to its end
            self._pending = b""
            self._fill()
            block = self._pending
            end = block.find(b"\n")
        self._pending = block[end + 1 :] if end >= 0 else b""
        self._line = first_line + 1
        table = pa.table({name: pa.array([""], pa.string()) for name in self._names})
        return _chunk(table, np.array([first_line]), {0: reason}, 0, 1, self.header)


def _unclosed_at_end(block: bytes, records: Records) -> tuple[Records, dict[int, str], tuple[bytes, int] | None]:
    """At the end of the file, a last record with an odd number of quotes: bad at its line, the rest read again."""
    start, end = int(records.starts[-1]), int(records.ends[-1])
    if block.count(b'"', start, end) % 2 == 0:
        return records, {}, None
    line_end = block.find(b"\n", start)
    kept = Records(records.starts, records.ends, records.lines, records.used, records.newlines, records.quoted_newlines)
    problems = {len(records.starts) - 1: 'has a quote (") that is never closed'}
    if line_end < 0 or line_end + 1 >= len(block):
        return kept, problems, None
    # The record is only its first line; the lines after it are read as rows again.
    ends = records.ends.copy()
    ends[-1] = line_end
    kept = Records(records.starts, ends, records.lines, line_end + 1, 0, records.quoted_newlines)
    return kept, problems, (block[line_end + 1 :], int(records.lines[-1]) + 1)


def _parse(
    block: bytes, records: Records, names: list[str], problems: dict[int, str]
) -> tuple[pa.Table, np.ndarray, dict[int, str]]:
    """The block's records as a table with a row per record (bad ones empty), their lines and problems."""
    width = len(names)
    content = np.ones(len(records.starts), dtype=bool)
    lengths = records.ends - records.starts
    content[lengths == 0] = False  # empty lines: pyarrow skips them, and so do we
    bad = sorted(problems)
    keep_bytes = block[: records.used] if not bad else _without(block, records, bad)
    invalid: list[int] = []
    longest = int(lengths.max()) if len(lengths) else 0
    options = _csv_options(names, max(1 << 20, 2 * longest + 2), records.quoted_newlines, invalid)
    try:
        table = pacsv.read_csv(io.BytesIO(keep_bytes), *options) if content.any() else _empty(names)
    except pa.ArrowInvalid:
        table, invalid = None, [1]
    counts = None
    if invalid:
        counts = field_counts(block, records)
    rows = content.copy()
    rows[bad] = True
    if counts is not None:
        for i in np.flatnonzero(content & (counts != width)).tolist():
            if i in problems:
                continue
            record = block[records.starts[i] : records.ends[i]]
            if counts[i] == 1 and is_blank(record):
                rows[i] = False
            else:
                problems[i] = f"has {int(counts[i])} fields where the header has {width}"
    valid = content & ~np.isin(np.arange(len(content)), list(problems))
    if counts is not None:
        valid &= counts == width
    if table is None or table.num_rows != int(valid.sum()):
        table = _parse_slowly(block, records, valid, names)
    positions = np.flatnonzero(rows)
    lines = records.lines[positions]
    renumbered = {int(np.searchsorted(positions, i)): reason for i, reason in problems.items() if rows[i]}
    if len(positions) != int(valid.sum()):
        table = _spread(table, valid[positions], names)
    return table, lines, renumbered


def _without(block: bytes, records: Records, bad: list[int]) -> bytes:
    """The block's bytes less the records already known bad."""
    parts, at = [], 0
    for i in bad:
        parts.append(block[at : records.starts[i]])
        at = min(int(records.ends[i]) + 1, records.used)
    parts.append(block[at : records.used])
    return b"".join(parts)


def _empty(names: list[str]) -> pa.Table:
    return pa.table({name: pa.array([], pa.string()) for name in names})


def _spread(table: pa.Table, valid: np.ndarray, names: list[str]) -> pa.Table:
    """The parsed rows placed at the valid positions, empty cells at the others."""
    take = np.full(len(valid), len(table), dtype=np.int64)
    take[valid] = np.arange(int(valid.sum()))
    padded = pa.concat_tables([table, pa.table({name: pa.array([""], pa.string()) for name in names})])
    return padded.take(pa.array(take))


def _parse_slowly(block: bytes, records: Records, valid: np.ndarray, names: list[str]) -> pa.Table:
    """The valid records one by one with the csv module: for quoting pyarrow reads otherwise."""
    csv.field_size_limit(sys.maxsize)
    columns: list[list[str]] = [[] for _ in names]
    for i in np.flatnonzero(valid).tolist():
        text = block[records.starts[i] : records.ends[i]].decode("utf-8")
        fields = next(csv.reader(io.StringIO(text, newline="")), [])
        fields += [""] * (len(names) - len(fields))
        for column, cell in zip(columns, fields, strict=False):
            column.append(cell)
    return pa.table({name: pa.array(column, pa.string()) for name, column in zip(names, columns, strict=True)})


def _chunk(
    table: pa.Table,
    lines: np.ndarray,
    problems: dict[int, str],
    start: int,
    stop: int,
    header: Header,
    long_cells: bool = True,
) -> RawChunk:
    part = table.slice(start, stop - start)
    mine = {i - start: reason for i, reason in problems.items() if start <= i < stop}
    arrays = {name: part.column(column.index).combine_chunks() for name, column in header.columns.items()}
    for name, array in arrays.items():
        if long_cells and (pc.max(pc.binary_length(array)).as_py() or 0) > MAX_CELL_CHARS:
            over = pc.greater(pc.utf8_length(array), MAX_CELL_CHARS).to_numpy(zero_copy_only=False)
            for i in np.flatnonzero(over).tolist():
                mine.setdefault(i, f"{name}: has more than {MAX_CELL_CHARS} characters")
    if mine:
        blank = np.zeros(stop - start, dtype=bool)
        blank[list(mine)] = True
        mask = pa.array(blank)
        arrays = {name: pc.if_else(mask, "", array) for name, array in arrays.items()}
    return RawChunk(
        lines=np.asarray(lines[start:stop], dtype=np.int64),
        cells={name: TextColumn(array) for name, array in arrays.items()},
        problems=mine,
    )


class ParquetOrders:
    """A Parquet orders file: the header from its schema, chunks from its row groups, every column as text."""

    def __init__(self, path: Path) -> None:
        import pyarrow.parquet as pq  # noqa: PLC0415

        try:
            self._file = pq.ParquetFile(path)
        except (OSError, pa.ArrowException) as error:
            raise OrdersFileError(path, f"cannot be read as Parquet ({error})") from None
        self.path = path
        self.header = parse_header(path, self._file.schema_arrow.names)
        self._done = 0

    def fraction_read(self) -> float:
        return self._done / max(self._file.metadata.num_rows, 1)

    def chunks(self, rows: int) -> Iterator[RawChunk]:
        line = 1
        for batch in self._file.iter_batches(batch_size=rows):
            n = batch.num_rows
            arrays = {}
            for name, column in self.header.columns.items():
                array = batch.column(column.index)
                arrays[name] = pc.fill_null(array if array.type == pa.string() else _as_text(array), "")
            self._done += n
            yield RawChunk(
                lines=np.arange(line, line + n, dtype=np.int64),
                cells={name: TextColumn(array) for name, array in arrays.items()},
            )
            line += n


def _as_text(array: pa.Array) -> pa.Array:
    """A Parquet column as the text a CSV cell would hold: numbers in their shortest form (4000.0 is "4000")."""
    return pc.cast(array, pa.string())


@contextmanager
def open_orders(path: Path | str, encoding: str | None = None) -> Iterator[OrdersFile | ParquetOrders]:
    """Open an orders file (`-` for standard input): CSV in UTF-8 (a byte-order mark allowed) or `encoding`."""
    if str(path) == "-":
        yield OrdersFile(Path(STDIN), sys.stdin.buffer, None, encoding)
        return
    path = Path(path)
    status = _is_regular(path)
    if path.suffix.lower() == ".parquet":
        yield ParquetOrders(path)
        return
    if encoding is None:
        _check_file_utf8(path)
    try:
        handle = open(path, "rb")  # noqa: SIM115
    except OSError as error:
        raise OrdersFileError(path, f"cannot be read ({error.strerror})") from None
    with handle:
        yield OrdersFile(path, handle, status.st_size, encoding)
