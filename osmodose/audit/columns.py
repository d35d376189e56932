"""The columns of an orders file, and the reading of its header.

An orders file is CSV with one header row.  Each header field is a column
name with an optional unit in square brackets, `glucose[mg/dL]`, which applies
to every cell of that column; without one a bare number is in the same unit
`osmodose check` assumes for it.  Cells of number columns are plain numbers.
The dose column alone may carry its unit in each cell ("1 g/kg"), as
`check --dose` does, or in a `dose-unit` column.  Names ignore case, and `_`
and `-` are the same (`target_rise` is `target-rise`).

Everything here mirrors `osmodose.case.inputs`: the same default units, the same
accepted dimensions and the same molar masses, so a row reads as the check
with the same typed text would read it.  `check_fields` gives that text.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Literal

from osmodose.case.fields import FIELDS, CaseField, keys
from osmodose.case.inputs import parse_dose
from osmodose.errors import InputError, OrdersFileError
from osmodose.science.units import parse_quantity

Kind = Literal["number", "text", "dose"]


@dataclass(frozen=True)
class ColumnSpec:
    """One column an orders file may have."""

    name: str
    kind: Kind
    #: Unit of a bare number when the header gives none (as `osmodose check`).
    default_unit: str | None = None
    #: One example unit per accepted dimension (as `osmodose check`).
    accepted: tuple[str, ...] = ()
    #: Canonical unit of the engine's column.
    canonical: str | None = None
    #: Substance whose molar mass turns a mass concentration into mmol/L.
    substance: str | None = None
    required: bool = False


def _column(field: CaseField) -> ColumnSpec:
    """The column of a field of the field table: same default unit, accepted dimensions and molar mass."""
    kind: Kind = "number" if field.kind == "quantity" else ("dose" if field.kind == "dose" else "text")
    if kind != "number":
        return ColumnSpec(field.key, kind, required=field.required)
    return ColumnSpec(
        field.key, kind, field.unit, field.examples, field.engine_unit, field.substance, required=field.required
    )


def _columns() -> dict[str, ColumnSpec]:
    columns = {"order-id": ColumnSpec("order-id", "text")}
    for key in keys("patient", "condition", "labs", "urine", "order"):
        columns[key] = _column(FIELDS[key])
        if key == "dose":
            columns["dose-unit"] = ColumnSpec("dose-unit", "text")
    return columns


#: Every column an orders file may have: an order id, the case fields of `osmodose check`, a dose unit.
COLUMNS: dict[str, ColumnSpec] = _columns()

#: The columns that say how much of the agent was ordered (at most one per row).
ORDER_COLUMNS: tuple[str, ...] = ("dose", "volume", "target-rise", "target-sodium")
_ORDER_WORDS = "a dose, volume, target-rise or target-sodium column"


@dataclass(frozen=True)
class Column:
    """A column as found in the header: where it is and the unit its header gives."""

    spec: ColumnSpec
    index: int
    written: str
    unit: str | None

    @property
    def unit_in_force(self) -> str | None:
        """The header's unit, else the column's default unit."""
        return self.unit or self.spec.default_unit


@dataclass(frozen=True)
class Header:
    """The header of one orders file."""

    path: Path
    columns: dict[str, Column]
    width: int

    def __contains__(self, name: str) -> bool:
        return name in self.columns

    def get(self, name: str) -> Column | None:
        return self.columns.get(name)


def normalise(name: str) -> str:
    """A header name as osmodose knows it: lower case, `-` for `_`, no surrounding spaces."""
    return name.strip().lower().replace("_", "-")


def parse_header(path: Path, fields: Sequence[str]) -> Header:
    """The header row's columns; any problem is an OrdersFileError naming the column."""
    columns: dict[str, Column] = {}
    known = ", ".join(COLUMNS)
    for position, written in enumerate(fields, start=1):
        raw = written.strip()
        name, unit = raw, None
        if raw.endswith("]") and "[" in raw:
            name, unit = raw[: raw.index("[")], raw[raw.index("[") + 1 : -1].strip()
        key = normalise(name)
        if not key:
            raise OrdersFileError(path, "has no name", column='""', position=position)
        spec = COLUMNS.get(key)
        if spec is None:
            raise OrdersFileError(path, "is not a column osmodose knows", raw, position, known)
        if key in columns:
            raise OrdersFileError(path, f"appears twice (also header field {columns[key].index + 1})", raw, position)
        if unit is not None:
            _check_unit(path, spec, raw, position, unit)
        columns[key] = Column(spec, position - 1, raw, unit or None)
    header = Header(path, columns, len(fields))
    _check_together(header)
    return header


def _check_unit(path: Path, spec: ColumnSpec, written: str, position: int, unit: str) -> None:
    if not unit:
        raise OrdersFileError(path, "has an empty unit in brackets", written, position)
    if spec.kind == "text":
        raise OrdersFileError(path, "takes no unit", written, position)
    try:
        if spec.kind == "dose":
            parse_dose("", f"1 {unit}")
        else:
            parse_quantity(spec.name, f"1 {unit}", spec.default_unit or "", spec.accepted)
    except InputError as error:
        problem = "has a unit osmodose cannot read" if "read" in error.problem else "has a unit in the wrong dimension"
        raise OrdersFileError(path, problem, written, position, error.accepted) from None


def _check_together(header: Header) -> None:
    path = header.path
    for spec in COLUMNS.values():
        if spec.required and spec.name not in header:
            raise OrdersFileError(path, "is required", spec.name)
    ordered = [name for name in ORDER_COLUMNS if name in header]
    if ordered and "agent" not in header:
        raise OrdersFileError(path, f"is required with {_ORDER_WORDS}", "agent")
    if "agent" in header and not ordered:
        column = header.columns["agent"]
        raise OrdersFileError(path, f"needs {_ORDER_WORDS}", column.written, column.index + 1)
    unit_column = header.get("dose-unit")
    if unit_column is not None:
        dose = header.get("dose")
        if dose is None:
            raise OrdersFileError(path, "needs a dose column", unit_column.written, unit_column.index + 1)
        if dose.unit is not None:
            raise OrdersFileError(
                path, "cannot be used when the dose header has a unit", unit_column.written, unit_column.index + 1
            )


def cell_text(header: Header, name: str, row: Sequence[str]) -> str:
    """A cell as `osmodose check` would be given it: stripped, with the header's unit appended."""
    column = header.columns[name]
    text = row[column.index].strip() if column.index < len(row) else ""
    if not text:
        return ""
    if name == "dose" and "dose-unit" in header:
        unit = row[header.columns["dose-unit"].index].strip()
        return f"{text} {unit}" if unit else text
    return f"{text} {column.unit}" if column.unit else text


def check_fields(header: Header, row: Sequence[str]) -> dict[str, object]:
    """The typed text `parse_check_request` gets for this row: the row-by-row path of the audit."""
    return {name: cell_text(header, name, row) for name in header.columns if name not in ("order-id", "dose-unit")}
