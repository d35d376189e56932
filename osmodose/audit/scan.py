"""Where the records of a block of CSV bytes begin and end, and on which line, found with numpy.

pyarrow parses the cells; it does not say on which line of the file each row
began, nor where a block may be cut without splitting a row.  Both follow
from the newlines and the quotes: a newline ends a record when an even
number of quotes comes before it in the record (RFC 4180 quoting, where a
quote inside a quoted cell is doubled), and a record starts on the line
after the number of newlines before it.  Each is one pass of numpy over the
bytes, never a Python loop over rows.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

NEWLINE, QUOTE, COMMA, CR = 10, 34, 44, 13


@dataclass(frozen=True)
class Records:
    """The complete records at the front of a block, and where the rest begins."""

    #: Byte offset of each record's start and end (the end excludes its newline and a CR before it).
    starts: np.ndarray
    ends: np.ndarray
    #: Line of the file on which each record starts.
    lines: np.ndarray
    #: Bytes of the block that belong to these records (through the last one's newline).
    used: int
    #: Newlines before `used`: the line after the block is the block's first line plus this.
    newlines: int
    #: Whether a newline sits inside a quoted cell (pyarrow must then be told).
    quoted_newlines: bool


def find_records(block: bytes, first_line: int, final: bool) -> Records:
    """The records that end in `block` (and, when `final`, the last one without a newline).

    An unclosed quote makes every later newline look quoted: the records end
    at the last newline with even quotes before it, and the caller finds the
    rest too long, or left over at the end of the file.
    """
    buf = np.frombuffer(block, dtype=np.uint8)
    newlines = np.flatnonzero(buf == NEWLINE)
    quotes = np.flatnonzero(buf == QUOTE) if b'"' in block else np.empty(0, dtype=np.int64)
    if len(quotes):
        even = np.searchsorted(quotes, newlines) % 2 == 0
        ends = newlines[even]
        quoted = not bool(even.all())
    else:
        ends, quoted = newlines, False
    used = int(ends[-1]) + 1 if len(ends) else 0
    if final and used < len(block):
        ends = np.append(ends, len(block))
        used = len(block)
    starts = np.empty(len(ends), dtype=np.int64)
    if len(ends):
        starts[0] = 0
        starts[1:] = ends[:-1] + 1
    lines = first_line + np.searchsorted(newlines, starts)
    # A CR before the newline is part of the line ending, not of the record.
    ends = ends.copy()
    if len(ends):
        inside = ends < len(block)
        last = np.minimum(ends, len(buf)) - 1
        crlf = (ends > starts) & (buf[np.maximum(last, 0)] == CR) & inside
        ends[crlf] -= 1
    return Records(starts, ends, lines, used, int(np.searchsorted(newlines, used)), quoted)


def field_counts(block: bytes, records: Records) -> np.ndarray:
    """Fields in each record: its commas outside quotes, plus one."""
    buf = np.frombuffer(block, dtype=np.uint8)
    commas = np.flatnonzero(buf == COMMA)
    if b'"' in block:
        quotes = np.flatnonzero(buf == QUOTE)
        starts_before = np.searchsorted(quotes, records.starts)
        # Quotes counted from the record's own start: parity within the record.
        record_of = np.searchsorted(records.starts, commas, side="right") - 1
        inside = (np.searchsorted(quotes, commas) - starts_before[np.maximum(record_of, 0)]) % 2 == 1
        commas = commas[~inside]
    return np.searchsorted(commas, records.ends) - np.searchsorted(commas, records.starts) + 1


def is_blank(record: bytes) -> bool:
    """A record the csv module reads as blank: nothing, spaces only, or one empty quoted cell."""
    text = record.strip()
    return not text or text == b'""'
