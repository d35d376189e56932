"""Plausibility ranges: a value outside is a typing error and is rejected.

Chosen to catch a slipped decimal point or a value in the wrong field, not to
judge the patient (common practice, no single source).  Clinical limits live in the formulary, not here.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    import numpy as np


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


#: Total body water outside this share of body weight is not a body's (common practice, chosen wide:
#: measured adult TBW is about 45-60 %): a Watson result outside it is refused, and the projected
#: range never takes TBW beyond it.
TBW_SHARE_OF_WEIGHT: tuple[float, float] = (0.3, 0.8)


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
    "glucose monohydrate": StrengthRange(
        2.5,
        70.0,
        "the same stocks as glucose, weighed as the monohydrate (product labels, from memory)",
    ),
}


@dataclass(frozen=True)
class WeightForAge:
    """The lightest and heaviest body weight that can be real at each age; outside is a typing slip.

    Rows are (age in years, lowest kg, highest kg), read by straight lines
    between them.  Children's bounds come from growth charts (WHO Child Growth
    Standards 0-5 y, CDC 2000 growth charts 2-20 y), the girls' 3rd and the
    boys' 97th centiles, recalled from memory, not re-read: the lowest is about
    half the 3rd centile (a child at half its expected weight is in severe
    wasting), the highest about 2.5 times the 97th (beyond the heaviest
    children reported).  Before one year the lowest falls to the field's own
    0.3 kg so that extremely premature infants are never refused.  From 18
    years the adult range applies: 25 kg (far below any adult: an adult far
    below about 25 kg is a slipped decimal point, common practice) to the
    field's 400 kg.  Chosen to catch a tenfold slip (70 kg typed 7.0, 9.5 kg
    typed 95), not to judge the patient.
    """

    rows: tuple[tuple[float, float, float], ...]
    source: str

    def low(self, age_years: np.ndarray) -> np.ndarray:
        ages, lows, _ = zip(*self.rows, strict=True)
        import numpy as np  # noqa: PLC0415 (the field table imports this module; the app's first frame needs no numpy)

        return np.interp(np.asarray(age_years, dtype=float), ages, lows)

    def high(self, age_years: np.ndarray) -> np.ndarray:
        ages, _, highs = zip(*self.rows, strict=True)
        import numpy as np  # noqa: PLC0415 (see `low`)

        return np.interp(np.asarray(age_years, dtype=float), ages, highs)


WEIGHT_FOR_AGE = WeightForAge(
    rows=(
        # age y, lowest kg, highest kg   (3rd centile girls / 97th centile boys, from memory)
        (0.0, 0.3, 11.0),  # birth: 3rd 2.4 / 97th 4.4
        (0.5, 1.5, 24.0),  # 6 months: 5.8 / 9.5
        (1.0, 3.0, 30.0),  # 1 year: 7.1 / 12.0
        (2.0, 4.5, 38.0),  # 9.0 / 15.3
        (3.0, 5.0, 45.0),  # 10.8 / 17.8
        (5.0, 7.0, 58.0),  # 14.0 / 23.0
        (8.0, 9.5, 90.0),  # 19.5 / 36
        (10.0, 11.5, 120.0),  # 23.5 / 48
        (12.0, 14.0, 155.0),  # 29 / 62
        (14.0, 17.0, 190.0),  # 36 / 76
        (16.0, 20.0, 220.0),  # 41 / 87
        (18.0, 25.0, 400.0),  # adults: 25 kg (common practice) to the field's 400 kg
        (120.0, 25.0, 400.0),
    ),
    source="growth charts (WHO 0-5 y, CDC 2000 2-20 y; 3rd and 97th centiles, from memory) "
    "and an adult minimum of 25 kg (common practice)",
)


@dataclass(frozen=True)
class DoseCeiling:
    """The largest per-kg dose limit a formulary may write for a solute, in mOsm/kg.

    A limit above `multiple` times the largest published dose of the solute is
    a typing slip (15 g/kg of mannitol for 1.5), not a protocol.  Every dose
    limit, whatever its unit, is turned into mOsm/kg with the agent's own
    composition before it is compared.
    """

    published_mosm_per_kg: float
    published: str
    multiple: float = 3.0

    @property
    def ceiling_mosm_per_kg(self) -> float:
        return self.published_mosm_per_kg * self.multiple


#: Per solute ("mixed" fluids are sodium-based crystalloids: judged as sodium chloride).
DOSE_CEILING: dict[str, DoseCeiling] = {
    # 1 g/kg / 182.17 g/mol = 5.49 mmol/kg = 5.49 mOsm/kg.
    "mannitol": DoseCeiling(5.49, "1 g/kg (Brain Trauma Foundation guidelines: 0.25-1 g/kg)"),
    # 3 % = 1027 mOsm/L x 10 mL/kg = 10.27 mOsm/kg; 0.9 % at 30 mL/kg is 9.2 mOsm/kg.
    "sodium chloride": DoseCeiling(10.27, "10 mL/kg of 3 % (paediatric texts give 2-10 mL/kg)"),
    "mixed": DoseCeiling(10.27, "10 mL/kg of 3 % sodium chloride (paediatric texts give 2-10 mL/kg)"),
    # 2 mmol/kg x 2 osmoles per mole = 4 mOsm/kg.
    "sodium bicarbonate": DoseCeiling(4.0, "2 mmol/kg (common practice: 1-2 mmol/kg, from memory)"),
    # 1 g/kg / 180.16 g/mol = 5.55 mOsm/kg.
    "glucose": DoseCeiling(5.55, "1 g/kg (hypoglycaemia rescue 0.5-1 g/kg, from memory)"),
    "glucose monohydrate": DoseCeiling(5.55, "1 g/kg (hypoglycaemia rescue 0.5-1 g/kg, from memory)"),
}

#: An agent's `max_rate` outside this is a typing slip: 0.1 mL/h is below what a pump can run;
#: 6000 mL/h (100 mL/min) is about the most a pressure bag drives through a large cannula, and
#: volumetric pumps stop near 1000-1200 mL/h (from memory).
MAX_RATE_RANGE = Range(0.1, 6000.0, "mL/h")
