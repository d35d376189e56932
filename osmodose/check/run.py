"""One check: a request and a formulary in, a `CheckResult` out.

This is the engine's single-case entry point, shared by `osmodose check`, the
app, verification and the course planner.  It builds a batch of one, runs the
same column code an audit runs, and turns row 0 into the result model.
"""

from __future__ import annotations

import math

import numpy as np

from osmodose import __version__
from osmodose.case.fields import FIELDS
from osmodose.case.inputs import CheckRequest, DoseRequest, Patient
from osmodose.check.engine import Cases, Figures, compute
from osmodose.check.judging import (
    HIGH_RISK_POTASSIUM_BELOW,
    HIGH_RISK_SODIUM_AT_MOST,
    SEVERITY_NAMES,
    worst_status,
)
from osmodose.check.presentations import fit_presentations
from osmodose.check.results import (
    CheckResult,
    DoseFigures,
    Finding,
    FormularyRef,
    PatientFigures,
)
from osmodose.check.rules import apply_rules
from osmodose.errors import InputError
from osmodose.formulary.model import Agent, Formulary, Limits
from osmodose.science.ranges import Range

MANNITOL_NOTE = (
    "No sodium projection for mannitol: it carries no sodium and stays extracellular "
    "(early it lowers measured sodium by drawing water from cells, later raises it through "
    "osmotic diuresis); its safety rests on the osmolar load, the serum osmolality and the osmolar gap."
)
NO_GAP_NOTE = "The osmolar gap needs a measured osmolality: without one, mannitol accumulating cannot be seen."
RATE_UNCHECKED_NOTE = "No duration given: the rate is not checked against this agent's maximum of {rate:g} mL/h."
RISE_NOT_JUDGED_NOTE = (
    "The 24 h rise limits apply from a starting sodium below {below:g} mmol/L (they protect a brain adapted "
    "to low sodium); from {sodium:g} mmol/L this rise of {rise:+.1f} mmol/L is judged by the sodium ceilings."
)
PROJECTION_NOTE = (
    "The projection ignores ongoing losses (urine, osmotic diuresis): real rises can exceed it; "
    "re-measure sodium every 2-6 h during active therapy."
)
HIGH_RISK_NOTE = (
    "High risk of osmotic demyelination ({reason}): the rise is refused above {limit:g} mmol/L in 24 h. "
    "Alcohol use, malnutrition and liver disease raise the risk too: judge them at the bedside."
)
NO_GLUCOSE_UREA_NOTE = "Calculated osmolality needs glucose and urea (or BUN)."
VOLUME_RANGE: Range = FIELDS["volume"].bounds
#: Watson total body water outside this share of body weight is refused (common practice).
WATSON_FRACTION_RANGE = (0.3, 0.8)
FILTER_NOTE = "Mannitol 20-25 % crystallises when cold: give it through an in-line filter."


def _nan(value: float | None) -> float:
    return math.nan if value is None else float(value)


def _opt(value: float) -> float | None:
    return None if math.isnan(value) else float(value)


def cases_from_request(request: CheckRequest, agent_index: int, use_watson: bool) -> Cases:
    """A batch of one from a request."""
    p, dose = request.patient, request.dose

    def col(value: float | None) -> np.ndarray:
        return np.array([_nan(value)])

    return Cases(
        weight_kg=col(p.weight_kg),
        age_years=col(p.age_years),
        male=np.array([p.sex == "male"]),
        height_cm=col(p.height_cm),
        labs={key: col(value) for key, value in request.labs.lab_values().items()},
        agent_index=np.array([agent_index]),
        dose_unit=np.array([dose.unit if dose else ""]),
        dose_amount=np.array([dose.amount if dose else math.nan]),
        dose_per_kg=np.array([bool(dose and dose.per_kg)]),
        duration_min=np.array([_nan(dose.duration_min if dose else None)]),
        use_watson=np.array([use_watson]),
        sodium_age_h=col(request.data_in.age_h("sodium") if request.data_in is not None else None),
    )


def run_check(request: CheckRequest, formulary: Formulary) -> CheckResult:
    """Compute every figure and finding for one request; InputError if a dose cannot be had."""
    agent: Agent | None = None
    agent_index = -1
    if request.dose is not None:
        agent = formulary.agent(request.dose.agent_id)
        agent_index = formulary.agents.index(agent)
        misfit = dose_misfit(request.dose, agent)
        if misfit is not None:
            raise misfit
    method = request.tbw_method or formulary.settings.tbw_method
    if method == "watson" and request.patient.height_cm is None:
        raise height_required_error()
    cases = cases_from_request(request, agent_index, method == "watson")
    figures = compute(cases, formulary.agents, formulary.settings)
    problem = tbw_error(
        method == "watson", request.patient, float(figures.tbw_l[0]), formulary.settings.adult_age_years
    )
    if problem is not None:
        raise problem
    if agent is not None and request.dose is not None:
        problem = volume_error(request.dose, agent, request.labs.sodium_mmol_l, float(figures.volume_ml[0]))
        if problem is not None:
            raise problem
    line = np.array([request.line or ""])
    outcomes = apply_rules(cases, figures, formulary.agents, formulary.limits, line)
    findings = [
        Finding(
            code=o.code,
            severity=SEVERITY_NAMES[int(o.severity[0])],
            message=o.message(0),
            value=_opt(float(o.value[0])),
            limit=_opt(float(o.limit[0])),
            unit=o.unit,
        )
        for o in outcomes
        if o.severity[0] > 0
    ]
    findings.sort(key=lambda item: item.severity != "refuse")
    return CheckResult(
        status=worst_status(x.severity for x in findings),
        findings=findings,
        notes=_notes(request, agent, figures, formulary.limits),
        formulary=FormularyRef.of(formulary),
        patient=PatientFigures(
            weight_kg=request.patient.weight_kg,
            age_years=request.patient.age_years,
            sex=request.patient.sex,
            height_cm=request.patient.height_cm,
            total_body_water_l=float(figures.tbw_l[0]),
            tbw_method="watson" if method == "watson" else "fraction",
        ),
        labs=request.labs.model_dump(),
        line=request.line,
        calculated_osmolality_mosm_kg=_opt(figures.calculated_osmolality[0]),
        effective_osmolality_mosm_kg=_opt(figures.effective_osmolality[0]),
        osmolar_gap_mosm_kg=_opt(figures.osmolar_gap[0]),
        dose=_dose_figures(request, agent, figures),
        sodium_change_per_litre_mmol_l=_opt(figures.sodium_change_per_litre[0]),
        projected_sodium_mmol_l=_opt(figures.projected_sodium[0]),
        projected_sodium_rise_mmol_l=_opt(figures.projected_rise[0]),
        program_version=__version__,
        labs_file=request.data_in,
    )


def height_required_error() -> InputError:
    """The Watson formula was asked for without a height."""
    return InputError("height", None, "is required for the Watson formula", "a height in cm, or tbw-method fraction")


def tbw_problems(
    use_watson: np.ndarray, age_years: np.ndarray, weight_kg: np.ndarray, tbw_l: np.ndarray, adult_age: float
) -> np.ndarray:
    """Rows whose Watson total body water cannot be used.

    The Watson formula was derived in adults (Watson PE et al. Am J Clin Nutr
    1980), and outside the body sizes it was fitted on it can give any number,
    even a negative one (a tiny weight with a short height and old age).  A
    result outside 30-80 % of body weight is refused rather than used (range
    common practice, chosen wide: measured adult TBW is about 45-60 %).
    """
    with np.errstate(invalid="ignore", divide="ignore"):
        fraction = tbw_l / weight_kg
        outside = ~((WATSON_FRACTION_RANGE[0] <= fraction) & (fraction <= WATSON_FRACTION_RANGE[1]))
    return use_watson & ((age_years < adult_age) | outside)


def tbw_error(use_watson: bool, patient: Patient, tbw_l: float, adult_age: float) -> InputError | None:
    """The error for a Watson total body water that cannot be used, or None."""
    bad = tbw_problems(
        np.array([use_watson]),
        np.array([patient.age_years]),
        np.array([patient.weight_kg]),
        np.array([tbw_l]),
        adult_age,
    )
    if not bad[0]:
        return None
    if patient.age_years < adult_age:
        return InputError(
            "tbw-method",
            "watson",
            f"is for adults only (age {patient.age_years:g} is under {adult_age:g})",
            "fraction for a child",
        )
    low, high = WATSON_FRACTION_RANGE
    return InputError(
        "tbw-method",
        "watson",
        f"gives {tbw_l:.1f} L for {patient.weight_kg:g} kg, {tbw_l / patient.weight_kg:.0%} of body weight, "
        f"outside {low:.0%}-{high:.0%}: the formula does not fit this height, weight and age",
        "fraction, or check height, weight and age",
    )


def dose_misfit(dose: DoseRequest, agent: Agent) -> InputError | None:
    """Why `dose` cannot be had from `agent` at all, or None.

    Shared with the audit, which asks it once per (dose unit, agent) pair and
    again for the message of each row that fails.
    """
    field = "target-rise" if dose.mode == "target-rise" else "dose"
    if dose.unit == "mmol/L" and not agent.projects_sodium:
        return InputError(
            field, dose.text, f"cannot be used with {agent.id}: osmodose projects no sodium for it", "dose or volume"
        )
    if dose.unit == "mmol" and agent.sodium_mmol_l <= 0:
        return InputError(field, dose.text, f"is in mmol of sodium, but {agent.id} has no sodium", "g, mL or mOsm")
    if dose.unit == "g" and agent.solute_g_per_l is None:
        return InputError(field, dose.text, f"is in grams, but {agent.id} is a mixed fluid", "mL, mmol or mOsm")
    return None


def volume_problems(mode: np.ndarray, volume_ml: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Columns of (target change unreachable, volume implausible) for orders with an agent.

    A volume given as such was range-checked when read; a volume worked out
    from a dose or a target change is checked here, after the engine.
    """
    unreachable = (mode == "target-rise") & np.isnan(volume_ml)
    bounds = VOLUME_RANGE
    with np.errstate(invalid="ignore"):
        inside = (bounds.low <= volume_ml) & (volume_ml <= bounds.high)
    return unreachable, ~unreachable & (mode != "volume") & ~inside


def volume_error(dose: DoseRequest, agent: Agent, serum_sodium_mmol_l: float, volume_ml: float) -> InputError | None:
    """The error for an order whose worked-out volume cannot be given, or None."""
    unreachable, implausible = volume_problems(np.array([dose.mode]), np.array([volume_ml]))
    if unreachable[0]:
        return InputError(
            "target-rise",
            dose.text,
            f"cannot be reached with {agent.id}: its sodium + potassium is {agent.cations_mmol_l:g} mmol/L "
            f"against serum {serum_sodium_mmol_l:g} mmol/L",
            "a change toward the infusate's sodium, smaller than the difference",
        )
    if implausible[0]:
        return InputError(
            dose.mode,
            dose.text,
            f"comes to {volume_ml:.5g} mL of {agent.id}, outside the plausible range",
            VOLUME_RANGE.describe(),
        )
    return None


def _dose_figures(request: CheckRequest, agent: Agent | None, figures: Figures) -> DoseFigures | None:
    if agent is None or request.dose is None:
        return None
    volume = float(figures.volume_ml[0])
    return DoseFigures(
        agent=agent.id,
        agent_label=agent.label,
        requested=f"{request.dose.mode} {request.dose.text}",
        volume_ml=volume,
        solute_g=_opt(figures.solute_g[0]),
        sodium_mmol=float(figures.sodium_mmol[0]),
        osmoles_mosm=float(figures.osmoles_mosm[0]),
        volume_ml_per_kg=float(figures.volume_ml_per_kg[0]),
        solute_g_per_kg=_opt(figures.solute_g_per_kg[0]),
        sodium_mmol_per_kg=float(figures.sodium_mmol_per_kg[0]),
        rate_ml_h=_opt(figures.rate_ml_h[0]),
        duration_min=request.dose.duration_min,
        presentations=fit_presentations(volume, agent.presentations_ml),
    )


def _notes(request: CheckRequest, agent: Agent | None, figures: Figures, limits: Limits) -> list[str]:
    notes = []
    labs = request.labs
    if labs.glucose_mmol_l is None or labs.urea_mmol_l is None:
        notes.append(NO_GLUCOSE_UREA_NOTE)
    if agent is None:
        return notes
    if agent.projects_sodium:
        notes.append(PROJECTION_NOTE)
    else:
        notes.append(MANNITOL_NOTE)
    if agent.solute == "mannitol":
        if labs.osmolality_mosm_kg is None:
            notes.append(NO_GAP_NOTE)
        notes.append(FILTER_NOTE)
    if agent.max_rate_ml_h is not None and request.dose is not None and request.dose.duration_min is None:
        notes.append(RATE_UNCHECKED_NOTE.format(rate=agent.max_rate_ml_h))
    rise = float(figures.projected_rise[0])
    below = limits.sodium_rise_applies_below
    warn = limits.sodium_rise_24h_warn
    if below is not None and warn is not None and labs.sodium_mmol_l >= below and rise > warn:
        notes.append(RISE_NOT_JUDGED_NOTE.format(below=below, sodium=labs.sodium_mmol_l, rise=rise))
    reasons = []
    if labs.sodium_mmol_l <= HIGH_RISK_SODIUM_AT_MOST:
        reasons.append(f"sodium {HIGH_RISK_SODIUM_AT_MOST:g} mmol/L or below")
    if labs.potassium_mmol_l is not None and labs.potassium_mmol_l < HIGH_RISK_POTASSIUM_BELOW:
        reasons.append("hypokalaemia")
    limit = limits.sodium_rise_24h_high_risk_refuse
    if reasons and limit is not None and not math.isnan(rise) and rise > 0:
        notes.append(HIGH_RISK_NOTE.format(reason=", ".join(reasons), limit=limit))
    return notes
