"""The cells of one chunk, read as `osmodose check` reads typed text.

A cell is shown to messages as check would have been typed it (the cell,
then the header's unit); number columns are read in one pass when their cells
are plain numbers, and cell by cell through `parse_quantity` otherwise, then
converted on the whole column with the header's unit and the molar masses.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from osmodose.audit.columns import ORDER_COLUMNS, Header
from osmodose.audit.reader import RawChunk
from osmodose.case.fields import FIELDS, conversion
from osmodose.errors import InputError
from osmodose.science.units import parse_quantity

#: Characters float() accepts that a plain number never has ("1_000", "nan", "inf", "Infinity").
_NOT_PLAIN = ("_", "n", "N", "i", "I")


def encode(cells: Sequence[str]) -> tuple[np.ndarray, list[str]]:
    """Codes into the list of distinct stripped cells: text columns repeat a few values."""
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
        return np.strings.strip(np.asarray(cells, dtype=str))

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
        cells = self.raw.cells[name]
        try:
            # The common case, every cell a number or empty: Python's float() in one pass.
            values = np.fromiter((float(c) if c else math.nan for c in cells), dtype=float, count=self.n)
            joined = "".join(cells)
            plain = not any(mark in joined for mark in _NOT_PLAIN)
        except ValueError:
            plain = False
        if plain:
            given = ~np.isnan(values)
            # "1e999" is a plain number to float() but infinite: check refuses it as not finite.
            odd = np.isinf(values)
        else:
            text = self.text(name)
            given = np.strings.str_len(text) > 0
            values = np.fromiter((_float(t) for t in text.tolist()), dtype=float, count=self.n)
            # float() also reads "1_000", "nan" and "inf", which check does not take for numbers.
            odd = given & (~np.isfinite(values) | (np.strings.find(text, "_") >= 0))
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


def _float(text: str) -> float:
    try:
        return float(text) if text else math.nan
    except ValueError:
        return math.nan
