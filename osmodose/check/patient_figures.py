"""The figures and notes of a check that concern the patient rather than the order alone.

Sodium corrected for glucose (Katz 1973, Hillier 1999), the order's share of
the 24 h rise limits with the goal band (Verbalis 2013), the weight a per-kg
dose uses when a formulary doses an agent on ideal or adjusted weight, and the
notes that say what a check could not judge: the line of a central-only agent
not stated, a rate not checked, tonicity without a glucose, body water in
obesity.  `run.run_check` calls these; the
findings themselves are rules of the table (`check.rules`).
"""

from __future__ import annotations

import math

import numpy as np

from osmodose.case.inputs import CheckRequest
from osmodose.check.engine import Figures
from osmodose.check.judging import high_risk
from osmodose.check.patient_rules import rate_judged_by_default
from osmodose.check.results import CorrectedSodium, RiseBudget
from osmodose.check.rules import rise_limits_in_force
from osmodose.errors import InputError
from osmodose.formulary.model import Agent, Formulary, Limits
from osmodose.science.formulas import tbw_watson

OSMOLAR_RATE_UNCHECKED_NOTE = (
    "No duration given: the rate is not checked against the default osmolar rate limits "
    "(warn above {warn:g}, refuse above {refuse:g} mOsm/kg/min)."
)
NO_RATE_LIMIT_UNCHECKED_NOTE = "No duration given: the rate is not checked."
RATE_NOT_JUDGED_NOTE = (
    "The rate is not judged: this agent sets no max_rate, and at {osmolarity:.0f} mOsm/L it is not above the "
    "{above:g} mOsm/L from which the default osmolar rate limits apply."
)
CENTRAL_LINE_NOTE = (
    "No line stated: {agent} is for a central line only; an order for it must name the line "
    "(verification holds it until it does)."
)
NO_TONICITY_NOTE = (
    "No glucose: whether this low sodium is hypotonic cannot be judged; hypertonic saline treats hypotonic "
    "hyponatraemia only (effective osmolality below {below:g} mOsm/kg)."
)
OBESITY_NOTE = (
    "Body mass index {bmi:.1f} kg/m^2: the fraction of weight ({fraction:.1f} L) overstates body water in "
    "obesity; the Watson formula gives {watson:.1f} L."
)
CHILD_DOSE_WEIGHT_NOTE = (
    "{agent} is dosed on {basis} weight in this formulary, an adult measure: for a child the actual weight is used."
)
HIGH_RISK_OUTSIDE_NOTE = (
    "High risk of osmotic demyelination ({reason}), but the high-risk limit ({limit:g} mmol/L in 24 h) applies "
    "only where the 24 h rise limits do, from a starting sodium below {below:g} mmol/L; from {sodium:g} mmol/L "
    "this order is judged by the sodium ceilings."
)
POTASSIUM_NOTE = (
    "Potassium given to correct the hypokalaemia raises serum sodium too (Edelman: serum sodium follows "
    "exchangeable sodium plus potassium over total body water): count it in the rise."
)


def _opt(value: float) -> float | None:
    return None if math.isnan(value) else float(value)


def rate_unchecked_note(agent: Agent, limits: Limits) -> str:
    """What the missing duration leaves unchecked, for an agent with no max_rate."""
    if rate_judged_by_default(agent, limits):
        return OSMOLAR_RATE_UNCHECKED_NOTE.format(warn=limits.osmolar_rate_warn, refuse=limits.osmolar_rate_refuse)
    return NO_RATE_LIMIT_UNCHECKED_NOTE


def safety_notes(request: CheckRequest, agent: Agent | None, figures: Figures, formulary: Formulary) -> list[str]:
    """The notes of the patient-level checks: the line not stated, tonicity, body size, the rate."""
    notes: list[str] = []
    limits, labs = formulary.limits, request.labs
    adult = request.patient.age_years >= formulary.settings.adult_age_years
    bmi, obese_from = float(figures.bmi[0]), limits.required("bmi_obese_from")
    p, height = request.patient, request.patient.height_cm
    uses_fraction = (request.tbw_method or formulary.settings.tbw_method) != "watson"
    sodium_order = agent is not None and agent.projects_sodium
    obese = not math.isnan(bmi) and bmi >= obese_from * (1 - 1e-9)
    if height is not None and adult and uses_fraction and not sodium_order and obese:
        watson = float(tbw_watson(p.age_years, height, p.weight_kg, p.sex == "male"))
        notes.append(OBESITY_NOTE.format(bmi=bmi, fraction=float(figures.tbw_l[0]), watson=watson))
    if agent is None or request.dose is None:
        return notes
    if agent.central_only and request.line is None:
        notes.append(CENTRAL_LINE_NOTE.format(agent=agent.id))
    rise = float(figures.projected_rise[0])
    below = limits.required("sodium_rise_applies_below")
    if labs.glucose_mmol_l is None and rise > 0 and labs.sodium_mmol_l < below:
        notes.append(NO_TONICITY_NOTE.format(below=limits.required("hypotonic_effective_osmolality_below")))
    above = limits.required("osmolar_rate_applies_above")
    if (
        request.dose.duration_min is not None
        and agent.max_rate_ml_h is None
        and not rate_judged_by_default(agent, limits)
    ):
        notes.append(RATE_NOT_JUDGED_NOTE.format(osmolarity=agent.osmolarity_mosm_l, above=above))
    if agent.dose_weight != "actual" and not adult:
        notes.append(CHILD_DOSE_WEIGHT_NOTE.format(agent=agent.id, basis=agent.dose_weight))
    return notes


def corrected_sodium(figures: Figures) -> CorrectedSodium | None:
    """Sodium corrected for glucose by Katz's and Hillier's factors; None without a glucose."""
    katz, hillier = _opt(figures.corrected_sodium_katz[0]), _opt(figures.corrected_sodium_hillier[0])
    if katz is None or hillier is None:
        return None
    return CorrectedSodium(katz=katz, hillier=hillier)


def rise_budget(request: CheckRequest, agent: Agent | None, figures: Figures, limits: Limits) -> RiseBudget | None:
    """The order's share of the 24 h rise limits where they apply (a starting sodium below the limit)."""
    rise = float(figures.projected_rise[0])
    if agent is None:
        return None
    labs = request.labs
    potassium = math.nan if labs.potassium_mmol_l is None else labs.potassium_mmol_l
    at_risk = bool(high_risk(np.array([labs.sodium_mmol_l]), np.array([potassium]))[0])
    return budget_of(rise, None, labs.sodium_mmol_l, at_risk, limits)


def budget_of(
    rise: float, already_used: float | None, lowest_sodium: float, at_high_risk: bool, limits: Limits
) -> RiseBudget | None:
    """A rise budget: the limits in force from the lowest sodium (and the risk), and the goal band.

    None where the rise limits do not apply (`lowest_sodium` not below
    `sodium_rise_applies_below`) or the order does not raise sodium.  At high
    risk of osmotic demyelination (sodium 105 mmol/L or below, or potassium
    below 3.5) the refuse limit is the high-risk one and the goal band narrows
    to 4-6 mmol/L (Verbalis JG et al. Am J Med 2013).  `already_used` is the
    rise already measured in the 24 h before (a course), added to the total.
    """
    if math.isnan(rise) or rise <= 0:
        return None
    applies, warn, refuse = rise_limits_in_force(limits, np.array([lowest_sodium]), np.array([at_high_risk]))
    if not applies[0]:
        return None
    top = limits.sodium_rise_24h_high_risk_target_high if at_high_risk else limits.sodium_rise_24h_target_high
    return RiseBudget(
        rise_mmol_l=rise,
        already_used_mmol_l=already_used,
        total_mmol_l=rise + (already_used or 0.0),
        warn_mmol_l=_opt(warn),
        refuse_mmol_l=_opt(float(refuse[0])),
        high_risk=at_high_risk,
        target_low_mmol_l=limits.sodium_rise_24h_target_low,
        target_high_mmol_l=top,
    )


def dose_weight_problems(
    weight_basis_code: np.ndarray, has_order: np.ndarray, height_cm: np.ndarray, age_years: np.ndarray, adult_age: float
) -> np.ndarray:
    """Orders of an adult for an agent dosed on ideal or adjusted weight with no height to work it out."""
    adult = ~(np.asarray(age_years) < adult_age)
    return has_order & (np.asarray(weight_basis_code) > 0) & np.isnan(np.asarray(height_cm, dtype=float)) & adult


def dose_weight_error(request: CheckRequest, agent: Agent | None, adult_age: float) -> InputError | None:
    """The error for an adult's order dosed on ideal or adjusted weight without a height, or None."""
    p = request.patient
    if agent is None or agent.dose_weight == "actual" or p.height_cm is not None or p.age_years < adult_age:
        return None
    return dose_weight_height_error(agent.id, agent.dose_weight)


def dose_weight_height_error(agent_id: str, basis: str) -> InputError:
    """One message for check and the audit: an agent dosed on ideal or adjusted weight needs a height."""
    return InputError(
        "height", None, f"is required: {agent_id} is dosed on {basis} body weight in this formulary", "a height in cm"
    )
