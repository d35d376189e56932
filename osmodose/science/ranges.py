"""Plausibility ranges: a value outside is a typing error and is rejected.

Chosen to catch a slipped decimal point or a value in the wrong field, not to
judge the patient (common practice, no single source).  Clinical limits live in the formulary, not here.
"""

from __future__ import annotations

from dataclasses import dataclass


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
    # Bedside pressures for a course of therapy: chosen to catch a slipped digit
    # or a value in the wrong box, not to judge (common practice).  ICP may be a
    # little below zero with the head up or the drain open.
    "map": Range(10.0, 250.0, "mmHg"),
    "icp": Range(-10.0, 150.0, "mmHg"),
}


@dataclass(frozen=True)
class StrengthRange:
    """The stock strengths of one solute that can be real, in % w/v (g per 100 mL).

    Outside it a formulary concentration is a typing error (a slipped decimal
    point, g/L typed as %), not a product.  Each range is wider than the stock
    on sale and stops short of what cannot be made; `source` says why.
    Values are compared at 0.01 % w/v, the precision labels print, so "1000
    mmol/L" of sodium bicarbonate (8.401 %) is the 8.4 % label.
    """

    low: float
    high: float
    source: str

    def contains(self, percent_wv: float) -> bool:
        return self.low <= round(percent_wv, 2) <= self.high

    def describe(self) -> str:
        return f"{self.low:g} to {self.high:g} % w/v"


#: Keyed by the solute names of `chemistry.SoluteName` ("mixed" has no single strength).
SOLUTE_STRENGTH: dict[str, StrengthRange] = {
    "sodium chloride": StrengthRange(
        0.1,
        30.0,
        "weakest stock 0.18 % (in glucose 4 %), strongest common vial 23.4 % (product labels, from memory); "
        "saturated sodium chloride is about 31.7 % w/v (36 g per 100 g water at 25 C, CRC Handbook, from memory)",
    ),
    "sodium bicarbonate": StrengthRange(
        1.0,
        8.4,
        "stocks run from 1.26 % (isotonic, 150 mmol/L) to 8.4 % (1 mmol/mL) (product labels, from memory); "
        "8.4 % is close to saturation (about 9.6 g per 100 mL water at 20 C, from memory)",
    ),
    "mannitol": StrengthRange(
        5.0,
        25.0,
        "stocks are 5, 10, 15, 20 and 25 % (product labels, from memory); 25 % is already supersaturated "
        "at room temperature and crystallises, so nothing stronger is made",
    ),
    "glucose": StrengthRange(
        2.5,
        70.0,
        "stocks run from 2.5 % (with saline) to 70 % (for parenteral nutrition compounding) "
        "(product labels, from memory)",
    ),
}
