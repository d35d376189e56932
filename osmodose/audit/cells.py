"""The cells of one chunk, read as `osmodose check` reads typed text.

A cell is shown to messages as check would have been typed it (the cell,
then the header's unit).  Number columns are read per column: pyarrow finds
the plain numbers with one regular expression and converts them in C++
(correctly rounded, as Python's float() is); only the other cells ("70kg",
"1,5", "nan") are read one by one, through `parse_quantity` as check reads
them.  Each column is then converted whole with the header's unit and the
molar masses.  Text columns are dictionary-encoded: a few distinct values.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from osmodose.audit.columns import ORDER_COLUMNS, Header
from osmodose.audit.reader import RawChunk, TextColumn
from osmodose.case.fields import FIELDS, conversion
from osmodose.errors import InputError
from osmodose.science.units import parse_quantity

#: A plain number, as float() reads it less "1_000", "nan" and "inf" (spaces around it allowed).
_PLAIN = r"^\s*[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?\s*$"


def encode(cells: Sequence[str]) -> tuple[np.ndarray, list[str]]:
    """Codes into the list of distinct stripped cells: text columns repeat a few values."""
    if isinstance(cells, TextColumn):
        encoded = pc.dictionary_encode(cells.array)
        codes = encoded.indices.to_numpy(zero_copy_only=False).astype(np.int64)
        return codes, [c.strip() for c in encoded.dictionary.to_pylist()]
    ids = {c: i for i, c in enumerate(set(cells))}
    codes = np.fromiter(map(ids.__getitem__, cells), dtype=np.int64, count=len(cells))
    return codes, [c.strip() for c in ids]


class ChunkCells:
    """The text of one chunk with the header's units: cells as check would see them."""

    def __init__(self, header: Header, raw: RawChunk) -> None:
        self.header, self.raw, self.n = header, raw, len(raw)
        self._numbers: dict[str, Number] = {}

    def text(self, name: str) -> np.ndarray:
        cells = self.raw.cells.get(name)
        if cells is None:
            return np.full(self.n, "", dtype="U1")
        return np.strings.strip(np.asarray(list(cells), dtype=str))

    def shown(self, name: str, row: int) -> str:
        """The cell with the header's unit appended: what check would have been typed."""
        column = self.header.columns[name]
        text = self.raw.cells[name][row].strip()
        if name == "dose" and "dose-unit" in self.header:
            unit = self.raw.cells["dose-unit"][row].strip()
            return f"{text} {unit}" if unit else text
        return f"{text} {column.unit}" if column.unit else text

    def given(self, name: str) -> np.ndarray:
        """Whether each cell of the column holds anything but spaces."""
        cells = self.raw.cells.get(name)
        if cells is None:
            return np.zeros(self.n, dtype=bool)
        if isinstance(cells, TextColumn):
            trimmed = pc.utf8_trim_whitespace(cells.array)
            return pc.greater(pc.binary_length(trimmed), 0).to_numpy(zero_copy_only=False)
        return np.fromiter((bool(c) and not c.isspace() for c in cells), dtype=bool, count=self.n)

    def order_text(self, row: int) -> str:
        """The order of a row as typed: its dose, volume or target-rise cell with the header's unit."""
        for name in ORDER_COLUMNS:
            if name in self.header and self.raw.cells[name][row].strip():
                return self.shown(name, row)
        return ""

    def number(self, name: str) -> Number:
        """A number column read once: engine values, values in the range's unit, given, unreadable cells."""
        if name not in self._numbers:
            self._numbers[name] = self._read_number(name)
        return self._numbers[name]

    def _read_number(self, name: str) -> Number:
        """Read a number column.

        Plain numbers are read as one array.  Any other cell ("70kg", "1,5",
        "nan") is read by `parse_quantity` exactly as check reads its typed
        text, so it is accepted, or refused with check's words, the same way.
        """
        column = self.header.get(name)
        field = FIELDS[name]
        if column is None:
            nothing = np.full(self.n, np.nan)
            return Number(nothing, nothing, np.zeros(self.n, dtype=bool), {})
        values, given, odd = _plain_numbers(self.raw.cells[name])
        unit = column.unit_in_force or field.unit
        engine = values * conversion(name, unit, field.engine_unit)
        judged = values * conversion(name, unit, field.unit)
        unreadable: dict[int, str] = {}
        for i in np.flatnonzero(odd).tolist():
            try:
                quantity = parse_quantity(name, self.shown(name, i), field.unit, field.examples)
            except InputError as error:
                unreadable[i] = str(error)
                engine[i] = judged[i] = np.nan
            else:
                number, written = float(quantity.magnitude), str(quantity.units)
                engine[i] = number * conversion(name, written, field.engine_unit)
                judged[i] = number * conversion(name, written, field.unit)
        return Number(engine, judged, given, unreadable)


@dataclass(frozen=True)
class Number:
    """A number column of a chunk, converted by the factors `osmodose check` uses for the same text.

    `engine` is in the engine's unit, `judged` in the unit its plausible range is
    written in (they differ for BUN: read into urea mmol/L, judged in mg/dL).
    """

    engine: np.ndarray
    judged: np.ndarray
    given: np.ndarray
    unreadable: dict[int, str]


def _plain_numbers(cells: Sequence[str]) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(values, given, odd) of a column: the plain numbers converted whole, every other cell read alone.

    `odd` marks the cells float() cannot read as a finite plain number ("70kg",
    "nan", "1_000", "1e999"): `parse_quantity` reads those as check does.
    The common column, numbers and empty cells only, is one cast in C++.
    """
    array = cells.array if isinstance(cells, TextColumn) else pa.array(list(cells), pa.string())
    empty = _empty_cells(array)
    try:
        numbers = pc.cast(pc.if_else(pa.array(empty), None, array), pa.float64())
    except pa.ArrowInvalid:  # some cell is not a bare number: find which
        plain = pc.match_substring_regex(array, _PLAIN)
        numbers = pc.cast(pc.if_else(plain, pc.utf8_trim_whitespace(array), None), pa.float64())
        is_plain = plain.to_numpy(zero_copy_only=False)
        blank = pc.equal(pc.utf8_trim_whitespace(array), "").to_numpy(zero_copy_only=False)
    else:
        blank = empty
        is_plain = ~blank
    # The values as they are (a null's slot holds some number), then NaN where no plain number was.
    values = np.frombuffer(numbers.buffers()[1], dtype=np.float64)[numbers.offset : numbers.offset + len(numbers)]
    values = np.where(is_plain, values, np.nan)
    # A cast may also take "nan" or "inf": those cells are read alone, as float() and check read them.
    is_plain &= ~np.isnan(values)
    given = is_plain.copy()
    odd = np.isinf(values)
    others = np.flatnonzero(~is_plain & ~blank)
    if len(others):
        texts = [cells[i].strip() for i in others.tolist()]
        read = [_float(t) for t in texts]
        given[others] = [bool(t) for t in texts]
        values[others] = read
        # float() also reads "1_000", "nan", "inf" and other digits, which check may not take for numbers.
        odd[others] = [bool(t) and (not math.isfinite(v) or "_" in t) for t, v in zip(texts, read, strict=True)]
    return values, given, odd


def _empty_cells(array: pa.Array) -> np.ndarray:
    """Which cells of a string column are empty, from its offsets (no text is read)."""
    offsets = np.frombuffer(array.buffers()[1], dtype=np.int32)[array.offset : array.offset + len(array) + 1]
    return offsets[1:] == offsets[:-1]


def _float(text: str) -> float:
    try:
        return float(text) if text else math.nan
    except ValueError:
        return math.nan
