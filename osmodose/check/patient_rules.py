"""What the rules on the patient and the labs read, besides the order, and the words they fire with.

The rule table (`check.rules`) judges these columns like any other figure: the
labs themselves (profound and moderate hyponatraemia, Spasovski G et al. Eur J
Endocrinol 2014; severe hypokalaemia; an osmolar gap with no mannitol), a
weight that cannot be real at the patient's age, an order that raises a low
sodium that is not hypotonic, every rate of a hypertonic agent (osmoles per kg
per minute, against published boluses), body water overstated by the fraction
of weight in obesity, an adults-only agent for a child, and a hypotonic fluid
with raised intracranial pressure.  Nothing here decides a severity: the table
and `judging.threshold` do.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from osmodose.check.engine import AgentColumns, Cases, Figures
from osmodose.check.judging import NONE, threshold, threshold_below
from osmodose.formulary.file_model import SettingsTable
from osmodose.formulary.model import Agent, Limits
from osmodose.science import formulas as f
from osmodose.science.ranges import WEIGHT_FOR_AGE


def _at_or_above(value: np.ndarray, limit: float) -> np.ndarray:
    """A figure at or above `limit` (within rounding of it counts as at it); NaN never is."""
    value = np.asarray(value, dtype=float)
    return np.isfinite(value) & (threshold_below(value, limit, None) == NONE)


def _below(value: np.ndarray, limit: float) -> np.ndarray:
    return threshold_below(np.asarray(value, dtype=float), limit, None) != NONE


def above_osmolar_rate_threshold(osmolarity_mosm_l: np.ndarray, limits: Limits) -> np.ndarray:
    """Infusates hypertonic enough for the default osmolar rate limits (`osmolar_rate_applies_above`)."""
    return (
        threshold(np.asarray(osmolarity_mosm_l, dtype=float), limits.required("osmolar_rate_applies_above"), None)
        != NONE
    )


def rate_judged_by_default(agent: Agent, limits: Limits) -> bool:
    """Whether the default osmolar rate limits judge this agent's rate: no max_rate, and hypertonic."""
    return agent.max_rate_ml_h is None and bool(
        above_osmolar_rate_threshold(np.array([agent.osmolarity_mosm_l]), limits)[0]
    )


@dataclass(frozen=True)
class PatientColumns:
    """Per case: the patient figures and the conditions the patient and lab rules apply under."""

    weight_kg: np.ndarray
    age_years: np.ndarray
    potassium: np.ndarray
    lightest_for_age: np.ndarray
    heaviest_for_age: np.ndarray
    tbw_fraction_l: np.ndarray  # the fraction-of-weight body water (what the check used, unless Watson)
    tbw_watson_l: np.ndarray
    rise: np.ndarray  # the order's projected change, as the check worked it
    watson_rise: np.ndarray  # the same had body water been Watson's
    # Conditions.
    not_profound: np.ndarray
    raising_not_hypotonic: np.ndarray
    default_rate_applies: np.ndarray
    obese_on_fraction: np.ndarray
    not_mannitol: np.ndarray
    adult_only_for_child: np.ndarray
    lowering_with_raised_icp: np.ndarray

    @classmethod
    def of(
        cls,
        cases: Cases,
        figures: Figures,
        agent: AgentColumns,
        limits: Limits,
        settings: SettingsTable,
        lowering: np.ndarray,
    ) -> PatientColumns:
        age, weight, sodium = cases.age_years, cases.weight_kg, cases.sodium
        has_agent = agent.has_agent
        adult = ~(np.asarray(age) < settings.adult_age_years)
        rise = figures.projected_rise
        with np.errstate(invalid="ignore"):
            raising = has_agent & (rise > 0)
        hyponatraemic = _below(sodium, limits.required("sodium_rise_applies_below"))
        not_hypotonic = _at_or_above(
            figures.effective_osmolality, limits.required("hypotonic_effective_osmolality_below")
        )
        max_rate = agent.column(lambda a: a.max_rate_ml_h)
        hypertonic = above_osmolar_rate_threshold(agent.osmolarity_mosm_l, limits)
        watson = np.asarray(f.tbw_watson(age, cases.height_cm, weight, cases.male), dtype=float)
        cations = np.where(agent.projects_sodium, agent.cations_mmol_l, np.nan)
        litres = figures.volume_ml / f.ML_PER_L
        with np.errstate(invalid="ignore", divide="ignore"):
            watson_rise = np.asarray(f.projected_sodium(sodium, cations, watson, litres), dtype=float) - sodium
        raised_icp = np.zeros(len(cases), dtype=bool) if cases.raised_icp is None else cases.raised_icp
        fraction_method = ~np.asarray(cases.use_watson, dtype=bool)
        return cls(
            weight_kg=weight,
            age_years=age,
            potassium=cases.potassium,
            lightest_for_age=WEIGHT_FOR_AGE.low(age),
            heaviest_for_age=WEIGHT_FOR_AGE.high(age),
            tbw_fraction_l=figures.tbw_l,
            tbw_watson_l=watson,
            rise=rise,
            watson_rise=watson_rise,
            not_profound=~_below(sodium, limits.required("hyponatraemia_profound_warn")),
            raising_not_hypotonic=raising & hyponatraemic & not_hypotonic,
            default_rate_applies=has_agent & np.isnan(max_rate) & hypertonic,
            obese_on_fraction=(
                has_agent
                & agent.projects_sodium
                & adult
                & fraction_method
                & _at_or_above(figures.bmi, limits.required("bmi_obese_from"))
            ),
            not_mannitol=~agent.is_mannitol,
            adult_only_for_child=has_agent & agent.adult_only & ~adult,
            lowering_with_raised_icp=lowering & np.asarray(raised_icp, dtype=bool),
        )


# --- the words of each rule: templates over {value}, {limit} and {severity} (`rules.Rule.describe`) ----------
# Lab values are shown as typed (`:g`): a figure within rounding of its limit never fires, so
# "125 is below 125" cannot be printed.

PROFOUND = (
    "serum sodium {value:g} mmol/L is below the {severity} limit of {limit:g} mmol/L: profound "
    "hyponatraemia (Spasovski 2014); look for its cause and for symptoms, and re-measure"
)
MODERATE = (
    "serum sodium {value:g} mmol/L is below the {severity} limit of {limit:g} mmol/L: moderate "
    "hyponatraemia (Spasovski 2014)"
)
HYPOKALAEMIA = (
    "serum potassium {value:g} mmol/L is below the {severity} limit of {limit:g} mmol/L: severe "
    "hypokalaemia; replacing potassium raises serum sodium too"
)
GAP_UNEXPLAINED = (
    "osmolar gap {value:.1f} mOsm/kg is above the {severity} limit of {limit:g} mOsm/kg with no mannitol "
    "ordered: exclude unmeasured osmoles (toxic alcohols such as methanol or ethylene glycol, ethanol not "
    "entered, mannitol given elsewhere) before hyperosmolar therapy"
)
NOT_HYPOTONIC = (
    "effective osmolality {value:.1f} mOsm/kg is at or above {limit:g} mOsm/kg: this low sodium is not "
    "hypotonic (translocational, from high glucose or mannitol, or hypertonic), and raising sodium does not "
    "treat it; correct the glucose first and judge the sodium corrected for it"
)
OSMOLAR_RATE = (
    "osmolar rate {value:.2f} mOsm/kg/min is above the default {severity} limit of {limit:g} mOsm/kg/min "
    "for an agent with no max_rate (published boluses give about 0.35: 3 % 250 mL or 23.4 % 30 mL over "
    "10 min, mannitol 1 g/kg over 15 min, in 70 kg)"
)
WEIGHT_LOW = "weight {value:g} kg is below {limit:.3g} kg, the lightest that can be real at this age"
WEIGHT_HIGH = "weight {value:g} kg is above {limit:.3g} kg, the heaviest that can be real at this age"
OBESITY = (
    "body mass index {value:.1f} kg/m^2 is {limit:g} or more: the fraction of weight overstates body water "
    "in obesity, so the real sodium change may be larger than projected"
)
ADULT_ONLY = "this agent is for adults only in this formulary, and the patient is {value:g} years old"
HYPOTONIC_RAISED_ICP = (
    "this order lowers sodium (projected {value:+.1f} mmol/L): a hypotonic fluid draws water into the brain "
    "and raises intracranial pressure, which is raised; give isotonic or hypertonic fluid instead"
)


# --- details that need more of the case than (value, limit): (columns, row) -> text ----------------


def weight_detail(columns: PatientColumns, row: int) -> str:
    return (
        f" (age {columns.age_years[row]:g} y; {WEIGHT_FOR_AGE.source}): check the weight for a slipped decimal "
        "point or a value in the wrong box"
    )


def obesity_detail(columns: PatientColumns, row: int) -> str:
    fraction, watson = columns.tbw_fraction_l[row], columns.tbw_watson_l[row]
    text = f"; body water {fraction:.1f} L by the fraction, {watson:.1f} L by the Watson formula"
    watson_rise, rise = columns.watson_rise[row], columns.rise[row]
    if np.isfinite(watson_rise) and np.isfinite(rise):
        text += f", with which this order changes sodium by {watson_rise:+.1f} mmol/L instead of {rise:+.1f}"
    return text + "; consider --tbw-method watson"
