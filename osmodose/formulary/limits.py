"""The safety limits a formulary may set, each with its default and its source.

A unit's `[limits]` table overrides any of these; local protocol always wins.
`LIMIT_SPECS` is the single place a limit is declared: its unit, default and
provenance.  The file model's `[limits]` table is generated from it
(`file_model.LimitsTable`), the resolved `Limits` answers each name as an
attribute (`limits.sodium_warn`), and `formulary show`, the template, the
diff and the rules all read it.  A new limit is one `LimitSpec` here.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

from pydantic import BaseModel, ConfigDict


@dataclass(frozen=True)
class LimitSpec:
    """One limit: its canonical unit, accepted units, default and source."""

    unit: str
    accepted: tuple[str, ...]
    default: float | None
    source: str
    meaning: str

    def describe(self) -> str:
        """The sentence a unit reads in the template, the schema and docs: meaning, then default."""
        text = self.meaning[0].upper() + self.meaning[1:]
        if self.default is None:
            return f"{text}; no default."
        return f"{text}; default {self.default:g} {display_unit(self.unit)}."


_CONC = ("mmol/L", "mEq/L")
_OSMOLALITY = ("mOsm/kg", "mmol/kg")

LIMIT_SPECS: dict[str, LimitSpec] = {
    "sodium_warn": LimitSpec(
        "mmol/L",
        _CONC,
        155.0,
        "common practice (no single source)",
        "serum sodium, current or projected, above which an order is warned",
    ),
    "sodium_refuse": LimitSpec(
        "mmol/L",
        _CONC,
        160.0,
        "US Joint Trauma System guideline: hold hyperosmolar infusions above 160",
        "serum sodium, current or projected, above which an order is refused",
    ),
    "osmolality_warn": LimitSpec(
        "mOsm/kg",
        _OSMOLALITY,
        310.0,
        "common practice: inside the 300-320 target (Hinson 2013), no single source",
        "serum osmolality (measured, else calculated) above which an order is warned",
    ),
    "osmolality_refuse": LimitSpec(
        "mOsm/kg",
        _OSMOLALITY,
        320.0,
        "Hinson HE et al. J Intensive Care Med 2013;28:3-11: hold mannitol above 320",
        "serum osmolality (measured, else calculated) above which an order is refused",
    ),
    "osmolar_gap_warn": LimitSpec(
        "mOsm/kg",
        _OSMOLALITY,
        10.0,
        "McMaster Textbook of Internal Medicine and clinical chemistry reviews: normal below 10",
        "osmolar gap above which mannitol is warned (mannitol accumulating)",
    ),
    "osmolar_gap_refuse": LimitSpec(
        "mOsm/kg",
        _OSMOLALITY,
        20.0,
        "common practice: a gap above about 20 is a common hold threshold (sources vary from 10 to 20)",
        "osmolar gap above which mannitol is refused",
    ),
    "osmolar_gap_negative_warn": LimitSpec(
        "mOsm/kg",
        _OSMOLALITY,
        10.0,
        "common practice: measured below calculated by more than 10 points to a unit slip or a sample problem",
        "how far measured osmolality may fall below the calculated one before it is warned",
    ),
    "sodium_rise_24h_warn": LimitSpec(
        "mmol/L",
        _CONC,
        8.0,
        "Verbalis JG et al. Am J Med 2013: 8 mmol/L in 24 h for high risk of osmotic demyelination",
        "projected or measured sodium rise within 24 h above which an order is warned",
    ),
    "sodium_rise_24h_refuse": LimitSpec(
        "mmol/L",
        _CONC,
        10.0,
        "Verbalis JG et al. Am J Med 2013 (limit 10-12 in 24 h) and "
        "Spasovski G et al. Eur J Endocrinol 2014 (10 in the first 24 h)",
        "projected or measured sodium rise within 24 h above which an order is refused",
    ),
    "sodium_rise_applies_below": LimitSpec(
        "mmol/L",
        _CONC,
        135.0,
        "hyponatraemia is serum sodium below 135 mmol/L (Spasovski G et al. Eur J Endocrinol 2014; "
        "Verbalis JG et al. Am J Med 2013): the 24 h rise limits protect a brain adapted to low sodium",
        "starting sodium below which the 24 h rise limits apply (osmotherapy from a normal sodium is "
        "judged by the sodium ceilings)",
    ),
    "sodium_rise_24h_high_risk_refuse": LimitSpec(
        "mmol/L",
        _CONC,
        8.0,
        "Verbalis JG et al. Am J Med 2013: 8 mmol/L in 24 h for high risk of osmotic demyelination",
        "rise within 24 h above which an order is refused when the risk of osmotic demyelination is high "
        "(sodium 105 mmol/L or below, or potassium below 3.5 mmol/L)",
    ),
    "sodium_fall_24h_warn": LimitSpec(
        "mmol/L",
        _CONC,
        10.0,
        "secondary sources: chronic hypernatraemia lowered by at most about 10 mmol/L a day",
        "projected or measured sodium fall within 24 h above which an order is warned",
    ),
    "sodium_fall_24h_refuse": LimitSpec(
        "mmol/L",
        _CONC,
        12.0,
        "common practice: symmetric with the rise limits (no single source)",
        "projected sodium fall within 24 h above which an order is refused",
    ),
    "sodium_low_warn": LimitSpec(
        "mmol/L",
        _CONC,
        130.0,
        "common practice: below 130 is moderate hyponatraemia (Spasovski G et al. Eur J Endocrinol 2014, from memory)",
        "projected sodium below which an order that lowers sodium is warned",
    ),
    "sodium_low_refuse": LimitSpec(
        "mmol/L",
        _CONC,
        125.0,
        "common practice: below 125 is profound hyponatraemia (Spasovski G et al. Eur J Endocrinol 2014, from memory)",
        "projected sodium below which an order that lowers sodium is refused",
    ),
    "peripheral_osmolarity_warn": LimitSpec(
        "mOsm/L",
        ("mOsm/L",),
        900.0,
        "parenteral nutrition guidance for peripheral lines (secondary source)",
        "infusate osmolarity above which a peripheral line is warned",
    ),
    "dose_tolerance": LimitSpec(
        "percent",
        ("percent",),
        10.0,
        "common practice (no single source)",
        "largest accepted difference between a stated dose and the recomputed one",
    ),
    "sodium_tolerance": LimitSpec(
        "mmol/L",
        _CONC,
        2.0,
        "common practice (no single source): sodium is reported to 1 mmol/L and repeat "
        "measurements commonly differ by 1-2 mmol/L",
        "largest accepted difference between a stated expected sodium and the projected one",
    ),
    "lab_max_age": LimitSpec(
        "h",
        ("h",),
        6.0,
        "common practice: re-measure sodium every 2-6 h during active therapy",
        "age of the latest labs beyond which they are too old to dose on",
    ),
    "icp_treat_above": LimitSpec(
        "mmHg",
        ("mmHg",),
        22.0,
        "Carney N et al. Brain Trauma Foundation guidelines, 4th ed. Neurosurgery 2017;80:6-15",
        "intracranial pressure above which treatment is indicated",
    ),
    "cpp_target_min": LimitSpec(
        "mmHg",
        ("mmHg",),
        60.0,
        "Carney N et al. Brain Trauma Foundation guidelines, 4th ed. Neurosurgery 2017;80:6-15 (target 60-70)",
        "cerebral perfusion pressure below which a reading is warned",
    ),
    "osmolar_gap_rise_warn": LimitSpec(
        "mOsm/kg",
        _OSMOLALITY,
        10.0,
        "common practice (no single source)",
        "rise of the osmolar gap between labs, after mannitol, above which it is warned",
    ),
    "mannitol_24h_max": LimitSpec(
        "g/kg",
        ("g/kg",),
        None,
        "no default: set by the unit's protocol",
        "cumulative mannitol within 24 h above which a dose is warned",
    ),
    # --- the projection's range, the free-water deficit, a course's apparent TBW and ICP response ---
    "projection_sodium_error": LimitSpec(
        "mmol/L",
        _CONC,
        2.0,
        "common practice (no single source): sodium is reported to 1 mmol/L and repeat "
        "measurements commonly differ by 1-2 mmol/L",
        "how far the measured sodium may be from the true one: the projected range starts from sodium +/- this",
    ),
    "projection_rise_underprediction": LimitSpec(
        "percent",
        ("percent",),
        240.0,
        "Mohmand HK et al. Clin J Am Soc Nephrol 2007;2:1110: in hyponatraemia treated with 3 % saline the "
        "observed rise exceeded the Adrogue-Madias prediction in 74 % (sodium below 120), and those who "
        "overcorrected rose about 2.4 times the prediction",
        "where the 24 h rise limits apply, the high end of the projected range is at least this share of the "
        "predicted rise",
    ),
    "free_water_target_sodium": LimitSpec(
        "mmol/L",
        _CONC,
        140.0,
        "the free-water deficit TBW x (Na/140 - 1) (secondary sources; Adrogue HJ, Madias NE. "
        "N Engl J Med 2000;342:1493-9, from memory)",
        "the sodium the free-water deficit is worked out to",
    ),
    "free_water_deficit_above": LimitSpec(
        "mmol/L",
        _CONC,
        145.0,
        "hypernatraemia is a serum sodium above 145 mmol/L (Adrogue HJ, Madias NE. N Engl J Med "
        "2000;342:1493-9, from memory)",
        "serum sodium above which the free-water deficit is worked out",
    ),
    "apparent_tbw_low_warn": LimitSpec(
        "percent",
        ("percent",),
        60.0,
        "no single source: a response 1.7 times the predicted one; those who overcorrected in Mohmand HK "
        "et al. Clin J Am Soc Nephrol 2007 rose 2.4 times the prediction (an apparent TBW near 42 %)",
        "apparent total body water, as a share of the estimate, below which a course warns (aquaresis likely)",
    ),
    "icp_response_before_h": LimitSpec(
        "h",
        ("h",),
        1.0,
        "common practice (no single source): the ICP a dose is judged against is a recent one",
        "how long before a dose's start the ICP reading it is compared with may be",
    ),
    "icp_response_after_h": LimitSpec(
        "h",
        ("h",),
        2.0,
        "common practice (no single source): hyperosmolar boluses lower ICP within minutes and most of "
        "the fall is seen within 1-2 h (from memory)",
        "how long after a dose's start its lowest ICP is looked for",
    ),
}

#: Pairs whose warn must not exceed refuse.
ORDERED_PAIRS: tuple[tuple[str, str], ...] = (
    ("sodium_warn", "sodium_refuse"),
    ("osmolality_warn", "osmolality_refuse"),
    ("osmolar_gap_warn", "osmolar_gap_refuse"),
    ("sodium_rise_24h_warn", "sodium_rise_24h_refuse"),
    ("sodium_fall_24h_warn", "sodium_fall_24h_refuse"),
)

#: Lower limits: the warn must not be below the refuse.
REVERSED_PAIRS: tuple[tuple[str, str], ...] = (("sodium_low_warn", "sodium_low_refuse"),)


def display_unit(unit: str) -> str:
    """A canonical unit as people write it ("percent" is "%")."""
    return "%" if unit == "percent" else unit


class Limits(BaseModel):
    """Limits in force, canonical values: each limit is an attribute (`limits.sodium_warn`).

    `values` holds one entry per `LIMIT_SPECS` name (None where the unit sets
    none and there is no default); `from_file` names those the file set.  A
    name that is not a limit raises AttributeError, so a misspelt limit in code
    fails the first test that reaches it (and a test scans the code for them).
    """

    model_config = ConfigDict(frozen=True)

    values: Mapping[str, float | None]
    from_file: frozenset[str] = frozenset()

    def __getattr__(self, name: str) -> float | None:
        values = self.__dict__.get("values")
        if values is not None and name in values:
            return values[name]
        raise AttributeError(f"{name!r} is not a limit osmodose knows")

    def get(self, name: str) -> float | None:
        """The limit called `name`, for code that walks every limit (show, diff, template)."""
        return self.values[name]

    def required(self, name: str) -> float:
        """A limit that has a default, so the loader always fills it (a unit can change it, never remove it)."""
        value = self.values[name]
        if value is None:
            raise ValueError(f"limit {name} has no default and must not be required")
        return value

    def source(self, name: str) -> str:
        """Where the value in force comes from, for reports and `formulary show`."""
        if name in self.from_file:
            return "formulary file"
        return "default: " + LIMIT_SPECS[name].source


def default_limits() -> Limits:
    """Every limit at its default: for code that works out figures without a formulary at hand."""
    return Limits(values={name: spec.default for name, spec in LIMIT_SPECS.items()})
