"""Plausibility ranges: a value outside is a typing error and is rejected.

Chosen to catch a slipped decimal point or a value in the wrong field, not to
judge the patient (common practice, no single source).  Clinical limits live in the formulary, not here.
"""

from __future__ import annotations

from dataclasses import dataclass

from osmodose.errors import InputError


@dataclass(frozen=True)
class Range:
    """An inclusive range in the field's canonical unit."""

    low: float
    high: float
    unit: str

    def describe(self) -> str:
        return f"{self.low:g} to {self.high:g} {self.unit}"


PLAUSIBLE: dict[str, Range] = {
    "weight": Range(0.3, 400.0, "kg"),
    "age": Range(0.0, 120.0, "years"),
    "height": Range(25.0, 250.0, "cm"),
    "sodium": Range(90.0, 200.0, "mmol/L"),
    "potassium": Range(1.0, 10.0, "mmol/L"),
    "glucose": Range(0.5, 100.0, "mmol/L"),
    "urea": Range(0.5, 100.0, "mmol/L"),
    # The urea range as BUN: 0.5 and 100 mmol/L x 28.01 g/mol (N2) = 1.4 and 280.1 mg/dL.
    "bun": Range(1.4, 280.1, "mg/dL"),
    "osmolality": Range(200.0, 450.0, "mOsm/kg"),
    # Not in the reference: an ethanol level above 200 mmol/L (about 920 mg/dL)
    # is beyond any survived level; chosen to catch typing errors (common practice).
    "ethanol": Range(0.0, 200.0, "mmol/L"),
    # Order sizes: chosen to catch a tenfold slip, not to judge (common practice).
    "volume": Range(0.1, 5000.0, "mL"),
    "duration": Range(1.0, 7 * 24 * 60.0, "min"),
    "target-rise": Range(-30.0, 30.0, "mmol/L"),
}


def check_plausible(field: str, value: float, shown: object, range_key: str | None = None) -> float:
    """Return `value` if inside the field's range, else raise an InputError.

    `shown` is what the user typed, so the message quotes their own words.
    """
    limits = PLAUSIBLE[range_key or field]
    if not (limits.low <= value <= limits.high):
        raise InputError(field, shown, "is outside the plausible range", limits.describe())
    return value
