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
from typing import Literal

from osmodose.frozen import Frozen

Looser = Literal["higher", "lower"]


@dataclass(frozen=True)
class LimitSpec:
    """One limit: its canonical unit, default and source.

    The units a file may write it in follow from its canonical unit
    (`accepted`).  `plausible` is the inclusive range a unit may set it in
    (canonical unit): outside it the file is invalid, a typing slip ("1600
    mmol/L" for 160) and not a protocol; the ranges are wide on purpose
    (common practice) and every default lies inside.  `looser` says which way
    a change loosens the limit (lets more through): `formulary diff` flags
    such a change at the top; None for a figure that is only shown, never
    judged.
    """

    unit: str
    default: float | None
    source: str
    meaning: str
    plausible: tuple[float, float] | None = None
    looser: Looser | None = "higher"

    @property
    def accepted(self) -> tuple[str, ...]:
        """The units a file may write this limit in: `ACCEPTED_UNITS`, else its canonical unit alone."""
        return ACCEPTED_UNITS.get(self.unit, (self.unit,))

    def describe(self) -> str:
        """The sentence a unit reads in the template, the schema and docs: meaning, then default."""
        text = self.meaning[0].upper() + self.meaning[1:]
        if self.default is None:
            return f"{text}; no default."
        return f"{text}; default {self.default:g} {display_unit(self.unit)}."


#: The units a limit may be written in, by its canonical unit: a sodium concentration in mEq/L is
#: the same figure in mmol/L, and SI laboratories write osmolality in mmol/kg.  A limit in any
#: other unit is written in that unit (or in one pint converts to it).
ACCEPTED_UNITS: dict[str, tuple[str, ...]] = {
    "mmol/L": ("mmol/L", "mEq/L"),
    "mOsm/kg": ("mOsm/kg", "mmol/kg"),
}
#: Plausible ranges shared by several limits (canonical units; common practice, chosen to catch
#: a slipped digit, not to judge a protocol).
_CEILING = (135.0, 175.0)  # a sodium ceiling above 175 mmol/L is no protocol
_SERUM_OSMOLALITY = (280.0, 380.0)
_GAP = (0.0, 50.0)
_RISE = (0.0, 20.0)  # guidelines limit 8-12 mmol/L a day
_LOW_SODIUM = (110.0, 140.0)

LIMIT_SPECS: dict[str, LimitSpec] = {
    "sodium_warn": LimitSpec(
        "mmol/L",
        155.0,
        "common practice (no single source)",
        "serum sodium, current or projected, above which an order is warned",
        plausible=_CEILING,
    ),
    "sodium_refuse": LimitSpec(
        "mmol/L",
        160.0,
        "US Joint Trauma System guideline: hold hyperosmolar infusions above 160",
        "serum sodium, current or projected, above which an order is refused",
        plausible=_CEILING,
    ),
    "osmolality_warn": LimitSpec(
        "mOsm/kg",
        310.0,
        "common practice: inside the 300-320 target (Hinson 2013), no single source",
        "serum osmolality (measured, else calculated) above which an order is warned",
        plausible=_SERUM_OSMOLALITY,
    ),
    "osmolality_refuse": LimitSpec(
        "mOsm/kg",
        320.0,
        "Hinson HE et al. J Intensive Care Med 2013;28:3-11: hold mannitol above 320",
        "serum osmolality (measured, else calculated) above which an order is refused",
        plausible=_SERUM_OSMOLALITY,
    ),
    "osmolar_gap_warn": LimitSpec(
        "mOsm/kg",
        10.0,
        "McMaster Textbook of Internal Medicine and clinical chemistry reviews: normal below 10",
        "osmolar gap above which mannitol is warned (mannitol accumulating)",
        plausible=_GAP,
    ),
    "osmolar_gap_refuse": LimitSpec(
        "mOsm/kg",
        20.0,
        "common practice: a gap above about 20 is a common hold threshold (sources vary from 10 to 20)",
        "osmolar gap above which mannitol is refused",
        plausible=_GAP,
    ),
    "osmolar_gap_negative_warn": LimitSpec(
        "mOsm/kg",
        10.0,
        "common practice: measured below calculated by more than 10 points to a unit slip or a sample problem",
        "how far measured osmolality may fall below the calculated one before it is warned",
        plausible=_GAP,
    ),
    "sodium_rise_24h_warn": LimitSpec(
        "mmol/L",
        8.0,
        "Verbalis JG et al. Am J Med 2013: 8 mmol/L in 24 h for high risk of osmotic demyelination",
        "projected or measured sodium rise within 24 h above which an order is warned",
        plausible=_RISE,
    ),
    "sodium_rise_24h_refuse": LimitSpec(
        "mmol/L",
        10.0,
        "Verbalis JG et al. Am J Med 2013 (limit 10-12 in 24 h) and "
        "Spasovski G et al. Eur J Endocrinol 2014 (10 in the first 24 h)",
        "projected or measured sodium rise within 24 h above which an order is refused",
        plausible=_RISE,
    ),
    "sodium_rise_applies_below": LimitSpec(
        "mmol/L",
        135.0,
        "hyponatraemia is serum sodium below 135 mmol/L (Spasovski G et al. Eur J Endocrinol 2014; "
        "Verbalis JG et al. Am J Med 2013): the 24 h rise limits protect a brain adapted to low sodium",
        "starting sodium below which the 24 h rise limits apply (osmotherapy from a normal sodium is "
        "judged by the sodium ceilings)",
        plausible=(120.0, 145.0),
        looser="lower",
    ),
    "sodium_rise_24h_high_risk_refuse": LimitSpec(
        "mmol/L",
        8.0,
        "Verbalis JG et al. Am J Med 2013: 8 mmol/L in 24 h for high risk of osmotic demyelination",
        "rise within 24 h above which an order is refused when the risk of osmotic demyelination is high "
        "(sodium 105 mmol/L or below, or potassium below 3.5 mmol/L)",
        plausible=_RISE,
    ),
    "sodium_fall_24h_warn": LimitSpec(
        "mmol/L",
        10.0,
        "secondary sources: chronic hypernatraemia lowered by at most about 10 mmol/L a day",
        "projected or measured sodium fall within 24 h above which an order is warned",
        plausible=(0.0, 24.0),
    ),
    "sodium_fall_24h_refuse": LimitSpec(
        "mmol/L",
        12.0,
        "common practice: symmetric with the rise limits (no single source)",
        "projected sodium fall within 24 h above which an order is refused",
        plausible=(0.0, 24.0),
    ),
    "sodium_low_warn": LimitSpec(
        "mmol/L",
        130.0,
        "common practice: below 130 is moderate hyponatraemia (Spasovski G et al. Eur J Endocrinol 2014, from memory)",
        "projected sodium below which an order that lowers sodium is warned",
        plausible=_LOW_SODIUM,
        looser="lower",
    ),
    "sodium_low_refuse": LimitSpec(
        "mmol/L",
        125.0,
        "common practice: below 125 is profound hyponatraemia (Spasovski G et al. Eur J Endocrinol 2014, from memory)",
        "projected sodium below which an order that lowers sodium is refused",
        plausible=_LOW_SODIUM,
        looser="lower",
    ),
    "peripheral_osmolarity_warn": LimitSpec(
        "mOsm/L",
        900.0,
        "parenteral nutrition guidance for peripheral lines (secondary source)",
        "infusate osmolarity above which a peripheral line is warned",
        plausible=(280.0, 1500.0),
    ),
    "dose_tolerance": LimitSpec(
        "percent",
        10.0,
        "common practice (no single source)",
        "largest accepted difference between a stated dose and the recomputed one",
        plausible=(0.0, 50.0),
    ),
    "sodium_tolerance": LimitSpec(
        "mmol/L",
        2.0,
        "common practice (no single source): sodium is reported to 1 mmol/L and repeat "
        "measurements commonly differ by 1-2 mmol/L",
        "largest accepted difference between a stated expected sodium and the projected one",
        plausible=(0.0, 10.0),
    ),
    "lab_max_age": LimitSpec(
        "h",
        6.0,
        "common practice: re-measure sodium every 2-6 h during active therapy",
        "age of the latest labs beyond which they are too old to dose on",
        plausible=(0.5, 72.0),
    ),
    "icp_treat_above": LimitSpec(
        "mmHg",
        22.0,
        "Carney N et al. Brain Trauma Foundation guidelines, 4th ed. Neurosurgery 2017;80:6-15",
        "intracranial pressure above which treatment is indicated",
        plausible=(5.0, 40.0),
    ),
    "cpp_target_min": LimitSpec(
        "mmHg",
        60.0,
        "Carney N et al. Brain Trauma Foundation guidelines, 4th ed. Neurosurgery 2017;80:6-15 (target 60-70)",
        "cerebral perfusion pressure below which a reading is warned",
        plausible=(30.0, 100.0),
        looser="lower",
    ),
    "osmolar_gap_rise_warn": LimitSpec(
        "mOsm/kg",
        10.0,
        "common practice (no single source)",
        "rise of the osmolar gap between labs, after mannitol, above which it is warned",
        plausible=_GAP,
    ),
    "mannitol_24h_max": LimitSpec(
        "g/kg",
        None,
        "no default: set by the unit's protocol",
        "cumulative mannitol within 24 h above which a dose is warned",
        plausible=(0.1, 6.0),
    ),
    # --- the labs themselves, with or without an order --------------------------------------------
    "hyponatraemia_moderate_warn": LimitSpec(
        "mmol/L",
        130.0,
        "Spasovski G et al. Eur J Endocrinol 2014;170:G1-47: moderate hyponatraemia is 125-129 mmol/L (from memory)",
        "serum sodium below which the labs are warned as moderate hyponatraemia",
        plausible=(115.0, 140.0),
        looser="lower",
    ),
    "hyponatraemia_profound_warn": LimitSpec(
        "mmol/L",
        125.0,
        "Spasovski G et al. Eur J Endocrinol 2014;170:G1-47: profound hyponatraemia is below 125 mmol/L (from memory)",
        "serum sodium below which the labs are warned as profound hyponatraemia",
        plausible=(100.0, 135.0),
        looser="lower",
    ),
    "hypokalaemia_severe_warn": LimitSpec(
        "mmol/L",
        2.5,
        "common practice: severe hypokalaemia is below 2.5 mmol/L (clinical reviews, from memory)",
        "serum potassium below which the labs are warned as severe hypokalaemia",
        plausible=(1.5, 3.5),
        looser="lower",
    ),
    "osmolar_gap_unexplained_warn": LimitSpec(
        "mOsm/kg",
        10.0,
        "McMaster Textbook of Internal Medicine and clinical chemistry reviews: normal below 10 "
        "(18 % of healthy adults are above it: Marino et al. Ann Emerg Med 2025)",
        "osmolar gap above which the labs are warned when no mannitol is ordered (unmeasured osmoles)",
        plausible=_GAP,
    ),
    # --- tonicity ------------------------------------------------------------------------------------
    "hypotonic_effective_osmolality_below": LimitSpec(
        "mOsm/kg",
        275.0,
        "common practice: hyponatraemia is hypotonic below an effective osmolality of 275 mOsm/kg "
        "(Spasovski G et al. Eur J Endocrinol 2014, from memory)",
        "effective osmolality (2 Na + glucose) at or above which a low sodium is not hypotonic, so an "
        "order that raises sodium is warned",
        plausible=(250.0, 300.0),
    ),
    # --- every rate judged -------------------------------------------------------------------------
    "osmolar_rate_warn": LimitSpec(
        "mOsm/kg/min",
        0.7,
        "twice the published boluses: 3 % 250 mL over 10 min, 23.4 % 30 mL over 10 min (US Joint Trauma "
        "System guideline) and 20 % mannitol 1 g/kg over 15 min (Brain Trauma Foundation) all give about "
        "0.35 mOsm/kg/min in 70 kg",
        "osmoles per kg per minute above which an order is warned, for an agent with no max_rate",
        plausible=(0.05, 5.0),
    ),
    "osmolar_rate_refuse": LimitSpec(
        "mOsm/kg/min",
        1.4,
        "four times the published boluses (about 0.35 mOsm/kg/min: US Joint Trauma System guideline; "
        "Brain Trauma Foundation)",
        "osmoles per kg per minute above which an order is refused, for an agent with no max_rate",
        plausible=(0.05, 5.0),
    ),
    "osmolar_rate_applies_above": LimitSpec(
        "mOsm/L",
        400.0,
        "common practice: isotonic fluids (0.9 % sodium chloride 308 mOsm/L, or with up to 40 mmol/L of "
        "potassium chloride 388) run as fast as resuscitation needs; hypertonic ones are bolused over minutes",
        "infusate osmolarity above which the default osmolar rate limits judge an agent with no max_rate",
        plausible=(280.0, 2000.0),
    ),
    # --- body size -----------------------------------------------------------------------------------
    "bmi_obese_from": LimitSpec(
        "kg/m^2",
        30.0,
        "WHO: obesity is a body mass index of 30 kg/m^2 or more",
        "body mass index from which the fraction of weight is warned as overstating body water",
        plausible=(25.0, 40.0),
    ),
    # --- the rise budget shown ---------------------------------------------------------------------
    "sodium_rise_24h_target_low": LimitSpec(
        "mmol/L",
        4.0,
        "Verbalis JG et al. Am J Med 2013: a goal of 4-8 mmol/L in 24 h (4-6 at high risk), from memory",
        "lower end of the 24 h rise goal shown beside an order (shown, not judged)",
        plausible=_RISE,
        looser=None,
    ),
    "sodium_rise_24h_target_high": LimitSpec(
        "mmol/L",
        8.0,
        "Verbalis JG et al. Am J Med 2013: a goal of 4-8 mmol/L in 24 h, from memory",
        "upper end of the 24 h rise goal shown beside an order (shown, not judged)",
        plausible=_RISE,
        looser=None,
    ),
    "sodium_rise_24h_high_risk_target_high": LimitSpec(
        "mmol/L",
        6.0,
        "Verbalis JG et al. Am J Med 2013: a goal of 4-6 mmol/L in 24 h at high risk of osmotic "
        "demyelination, from memory",
        "upper end of the 24 h rise goal shown at high risk of osmotic demyelination (shown, not judged)",
        plausible=_RISE,
        looser=None,
    ),
    # --- rise limits over 48 h and later days (a course) ---------------------------------------------
    "sodium_rise_48h_refuse": LimitSpec(
        "mmol/L",
        18.0,
        "Verbalis JG et al. Am J Med 2013: 18 mmol/L in 48 h",
        "measured or projected sodium rise within 48 h above which it is refused (where the rise limits apply)",
        plausible=(0.0, 30.0),
    ),
    "sodium_rise_later_24h_refuse": LimitSpec(
        "mmol/L",
        8.0,
        "Spasovski G et al. Eur J Endocrinol 2014: at most 8 mmol/L in each 24 h after the first "
        "(from memory of the numbers)",
        "rise within a 24 h window starting a day or more after the lowest sodium, above which it is refused",
        plausible=_RISE,
    ),
    # --- the projection's range, the free-water deficit, a course's apparent TBW and ICP response ---
    "projection_sodium_error": LimitSpec(
        "mmol/L",
        2.0,
        "common practice (no single source): sodium is reported to 1 mmol/L and repeat "
        "measurements commonly differ by 1-2 mmol/L",
        "how far the measured sodium may be from the true one: the projected range starts from sodium +/- this",
        plausible=(0.0, 10.0),
        looser="lower",
    ),
    "projection_rise_underprediction": LimitSpec(
        "percent",
        240.0,
        "Mohmand HK et al. Clin J Am Soc Nephrol 2007;2:1110: in hyponatraemia treated with 3 % saline the "
        "observed rise exceeded the Adrogue-Madias prediction in 74 % (sodium below 120), and those who "
        "overcorrected rose about 2.4 times the prediction",
        "where the 24 h rise limits apply, the high end of the projected range is at least this share of the "
        "predicted rise",
        plausible=(100.0, 500.0),
        looser="lower",
    ),
    "free_water_target_sodium": LimitSpec(
        "mmol/L",
        140.0,
        "the free-water deficit TBW x (Na/140 - 1) (secondary sources; Adrogue HJ, Madias NE. "
        "N Engl J Med 2000;342:1493-9, from memory)",
        "the sodium the free-water deficit is worked out to",
        plausible=(130.0, 150.0),
        looser=None,
    ),
    "free_water_deficit_above": LimitSpec(
        "mmol/L",
        145.0,
        "hypernatraemia is a serum sodium above 145 mmol/L (Adrogue HJ, Madias NE. N Engl J Med "
        "2000;342:1493-9, from memory)",
        "serum sodium above which the free-water deficit is worked out",
        plausible=(140.0, 160.0),
        looser=None,
    ),
    "apparent_tbw_low_warn": LimitSpec(
        "percent",
        60.0,
        "no single source: a response 1.7 times the predicted one; those who overcorrected in Mohmand HK "
        "et al. Clin J Am Soc Nephrol 2007 rose 2.4 times the prediction (an apparent TBW near 42 %)",
        "apparent total body water, as a share of the estimate, below which a course warns (aquaresis likely)",
        plausible=(10.0, 100.0),
        looser="lower",
    ),
    "icp_response_before_h": LimitSpec(
        "h",
        1.0,
        "common practice (no single source): the ICP a dose is judged against is a recent one",
        "how long before a dose's start the ICP reading it is compared with may be",
        plausible=(0.1, 24.0),
        looser=None,
    ),
    "icp_response_after_h": LimitSpec(
        "h",
        2.0,
        "common practice (no single source): hyperosmolar boluses lower ICP within minutes and most of "
        "the fall is seen within 1-2 h (from memory)",
        "how long after a dose's start its lowest ICP is looked for",
        plausible=(0.1, 24.0),
        looser=None,
    ),
}

#: Pairs whose warn must not exceed refuse.
ORDERED_PAIRS: tuple[tuple[str, str], ...] = (
    ("sodium_warn", "sodium_refuse"),
    ("osmolality_warn", "osmolality_refuse"),
    ("osmolar_gap_warn", "osmolar_gap_refuse"),
    ("sodium_rise_24h_warn", "sodium_rise_24h_refuse"),
    ("sodium_fall_24h_warn", "sodium_fall_24h_refuse"),
    ("osmolar_rate_warn", "osmolar_rate_refuse"),
    ("sodium_rise_24h_target_low", "sodium_rise_24h_target_high"),
)

#: Lower limits: the warn must not be below the refuse.
REVERSED_PAIRS: tuple[tuple[str, str], ...] = (
    ("sodium_low_warn", "sodium_low_refuse"),
    ("hyponatraemia_moderate_warn", "hyponatraemia_profound_warn"),
)


def display_unit(unit: str) -> str:
    """A canonical unit as people write it ("percent" is "%")."""
    return "%" if unit == "percent" else unit


class Limits(Frozen):
    """Limits in force, canonical values: each limit is an attribute (`limits.sodium_warn`).

    `values` holds one entry per `LIMIT_SPECS` name (None where the unit sets
    none and there is no default); `from_file` names those the file set.  A
    name that is not a limit raises AttributeError, so a misspelt limit in code
    fails the first test that reaches it (and a test scans the code for them).
    """

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
