"""The figures and notes around a check's sodium projection: urine losses, the range, free water, equiosmolar doses.

`run_check` adds these to its result.  Each figure is worked on whole columns
(`engine.compute` for the projection with losses, its range and the free-water
figures; `agent_volumes_for_change` and `equiosmolar_ml` here for one volume
per agent), so a check and a row of an audit agree; only row 0 is read into
the result.  The notes say what each method holds and what it does not.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

import numpy as np

from osmodose.case.inputs import CheckRequest
from osmodose.check.engine import Figures, rise_limits_apply
from osmodose.check.results import AgentVolume
from osmodose.errors import InputError
from osmodose.formulary.model import Agent, Formulary
from osmodose.science import formulas as f
from osmodose.science.formulas import ML_PER_L, watson_standard_error

URINE_KEYS = ("urine-volume", "urine-sodium", "urine-potassium")


def _opt(value: float) -> float | None:
    return None if math.isnan(value) else float(value)


def _nan(value: float | None) -> float:
    return math.nan if value is None else float(value)


def agent_volumes_for_change(
    sodium: np.ndarray, tbw_l: np.ndarray, change_mmol_l: np.ndarray, agents: Sequence[Agent]
) -> np.ndarray:
    """(cases x agents) volume in mL of each agent whose projection moves sodium by `change_mmol_l`.

    The engine's projection solved for the volume (`formulas.volume_for_sodium_change`);
    NaN where the agent cannot make that change (mannitol, or an infusate on
    the wrong side of the serum).  The volume of each hypotonic fluid for the
    daily fall limit, and for re-lowering after an overcorrection.
    """
    cations = np.asarray([a.cations_mmol_l if a.projects_sodium else np.nan for a in agents], dtype=float)
    litres = f.volume_for_sodium_change(
        np.asarray(sodium, dtype=float)[:, None], cations[None, :], np.asarray(tbw_l)[:, None],
        np.asarray(change_mmol_l, dtype=float)[:, None],
    )  # fmt: skip
    return np.asarray(litres, dtype=float) * f.ML_PER_L


def equiosmolar_ml(osmoles_mosm: np.ndarray, agents: Sequence[Agent]) -> np.ndarray:
    """(cases x agents) volume in mL of each agent that carries `osmoles_mosm` (ideal osmolarity).

    `formulas.volume_for_amount` with each agent's theoretical osmolarity:
    231 mL of 20 % mannitol (253.6 mOsm) is 31.7 mL of 23.4 % or 247 mL of 3 %
    saline.  NaN for agents that are not osmotherapy agents (`Agent.osmotically_active`).
    """
    osmolarity = np.asarray([a.osmolarity_mosm_l if a.osmotically_active else np.nan for a in agents], dtype=float)
    return np.asarray(
        f.volume_for_amount(np.asarray(osmoles_mosm, dtype=float)[:, None], osmolarity[None, :]), dtype=float
    )


def urine_columns(request: CheckRequest) -> dict[str, np.ndarray]:
    """The request's urine as the engine's batch-of-one columns (NaN where not given)."""
    urine = request.urine
    values = (None, None, None) if urine is None else (urine.volume_ml, urine.sodium_mmol_l, urine.potassium_mmol_l)
    return {key: np.array([_nan(value)]) for key, value in zip(URINE_KEYS, values, strict=True)}


def loss_figures(request: CheckRequest, agent: Agent | None, figures: Figures, formulary: Formulary) -> dict[str, Any]:
    """The projection with losses, its range, the free-water figures and the equiosmolar volumes of row 0."""
    urine = request.urine
    low, high = _opt(figures.projected_sodium_low[0]), _opt(figures.projected_sodium_high[0])
    return {
        "urine": None if urine is None else urine.model_dump(),
        "projected_sodium_without_losses_mmol_l": _opt(figures.projected_sodium_without_losses[0]),
        "projected_sodium_range_mmol_l": None if low is None or high is None else (low, high),
        "electrolyte_free_water_clearance_l": _opt(figures.free_water_clearance_l[0]),
        "free_water_deficit_l": _opt(figures.free_water_deficit_l[0]),
        "volumes_for_daily_fall": _daily_fall_volumes(request, figures, formulary),
        "equiosmolar": _equiosmolar(agent, figures, formulary),
    }


def _daily_fall_volumes(request: CheckRequest, figures: Figures, formulary: Formulary) -> list[AgentVolume]:
    """With a free-water deficit: each fluid below serum sodium, and its volume that lowers it by the daily limit."""
    fall = formulary.limits.sodium_fall_24h_warn
    sodium = request.labs.sodium_mmol_l
    if math.isnan(figures.free_water_deficit_l[0]) or fall is None:
        return []
    volumes = agent_volumes_for_change(np.array([sodium]), figures.tbw_l[:1], np.array([-fall]), formulary.agents)[0]
    return [
        AgentVolume(agent=a.id, volume_ml=_opt(float(v)))
        for a, v in zip(formulary.agents, volumes, strict=True)
        if a.projects_sodium and a.cations_mmol_l < sodium
    ]


def _equiosmolar(agent: Agent | None, figures: Figures, formulary: Formulary) -> list[AgentVolume] | None:
    """For an order of an osmotherapy agent: every other one's volume with the same ideal osmoles."""
    if agent is None:
        return None
    if not agent.osmotically_active:
        return []
    volumes = equiosmolar_ml(figures.osmoles_mosm[:1], formulary.agents)[0]
    return [
        AgentVolume(agent=a.id, volume_ml=float(v))
        for a, v in zip(formulary.agents, volumes, strict=True)
        if a.osmotically_active and a.id != agent.id
    ]


def urine_problems(urine_volume_ml: np.ndarray, tbw_low_l: np.ndarray) -> np.ndarray:
    """Rows whose urine volume is half the body's water or more, over one infusion: a slip, not an output.

    Judged against the low end of the total body water the projected range
    uses, so the balance (which takes the urine out of that water) stays
    meaningful over the whole range.  Common practice, chosen to catch slips.
    """
    with np.errstate(invalid="ignore"):
        return np.asarray(urine_volume_ml / ML_PER_L >= tbw_low_l / 2)


def urine_volume_error(shown: object, tbw_low_l: float) -> InputError:
    """The error for a urine volume `urine_problems` finds."""
    return InputError(
        "urine-volume",
        shown,
        f"is half the total body water or more ({tbw_low_l:.1f} L at the low end of its range): "
        "not a urine output over one infusion",
        f"less than {tbw_low_l / 2 * ML_PER_L:.0f} mL",
    )


def urine_error(request: CheckRequest, tbw_low_l: float) -> InputError | None:
    """The error for the request's urine volume, or None (see `urine_problems`)."""
    urine = request.urine
    if urine is None or not urine_problems(np.array([urine.volume_ml]), np.array([tbw_low_l]))[0]:
        return None
    return urine_volume_error(request.entered.get("urine-volume", f"{urine.volume_ml:g}"), tbw_low_l)


URINE_PROJECTION_NOTE = (
    "The projection takes out the urine given ({volume:g} mL with Na + K {cations:g} mmol/L) over the infusion "
    "(full mass balance: Barsoum NR, Levine BS. Nephrol Dial Transplant 2002;17:1176); without it "
    "{without:.1f} mmol/L. Other losses and intake are not modelled: re-measure sodium every 2-6 h."
)
NO_URINE_POTASSIUM_NOTE = (
    "No urine potassium given: taken as 0, so the urine's Na + K is low and the projection errs high."
)
RANGE_NOTE = (
    "Projected range {low:.1f} to {high:.1f} mmol/L ({rise_low:+.1f} to {rise_high:+.1f}): total body water "
    "{tbw_low:.1f} to {tbw_high:.1f} L ({basis}, each +/- Watson's standard error of {error:g} L: Watson PE et al. "
    "Am J Clin Nutr 1980) and measured sodium +/- {sodium_error:g} mmol/L (common practice){widened}. It does not "
    "hold losses or intake not entered (urine not given, drinks, feeds, other infusions), a change in body water "
    "during the infusion, sodium held in osmotically inactive stores, or a wrong label."
)
WIDENED_NOTE = (
    "; the high end is at least {share:g} % of the predicted rise, as measured rises in hyponatraemia outran "
    "the Adrogue-Madias prediction (those who overcorrected rose 2.4 times it: Mohmand HK et al. Clin J Am Soc "
    "Nephrol 2007;2:1110)"
)
FREE_WATER_NOTE = (
    "Free-water deficit TBW x (Na/{target:g} - 1) = {deficit:.1f} L (secondary sources): the water alone, before "
    "ongoing losses; the volumes beside it lower sodium by the daily limit of {fall:g} mmol/L by the same "
    "projection as an order."
)
EQUIOSMOLAR_NOTE = (
    "Equiosmolar volumes carry the same theoretical (ideal) osmoles as this order; the measured osmolality of "
    "saline is about 7 % lower (osmotic coefficient about 0.93), so saline delivers about 7 % fewer effective "
    "osmoles than its ideal figure."
)


def _tbw_basis(request: CheckRequest, figures: Figures) -> str:
    """Which estimates the range's total body water spans."""
    if request.tbw_l is not None:
        return "the apparent total body water"
    if not math.isnan(figures.tbw_other_l[0]):
        return "the fraction of weight and the Watson formula"
    method = request.tbw_method
    return "the Watson formula" if method == "watson" else "the fraction of weight"


def loss_notes(request: CheckRequest, agent: Agent | None, figures: Figures, formulary: Formulary) -> list[str]:
    """The notes of the urine balance, the projected range, the free-water deficit and the equiosmolar volumes."""
    notes: list[str] = []
    limits = formulary.limits
    projected = float(figures.projected_sodium[0])
    urine = request.urine
    if urine is not None and agent is not None and agent.projects_sodium:
        notes.append(
            URINE_PROJECTION_NOTE.format(
                volume=urine.volume_ml,
                cations=urine.cations_mmol_l,
                without=float(figures.projected_sodium_without_losses[0]),
            )
        )
    if urine is not None and urine.potassium_mmol_l is None:
        notes.append(NO_URINE_POTASSIUM_NOTE)
    if not math.isnan(projected):
        sodium = request.labs.sodium_mmol_l
        low, high = float(figures.projected_sodium_low[0]), float(figures.projected_sodium_high[0])
        share = limits.projection_rise_underprediction
        widened = share is not None and projected > sodium and bool(rise_limits_apply(np.array([sodium]), limits)[0])
        notes.append(
            RANGE_NOTE.format(
                low=low,
                high=high,
                rise_low=low - sodium,
                rise_high=high - sodium,
                tbw_low=float(figures.tbw_low_l[0]),
                tbw_high=float(figures.tbw_high_l[0]),
                basis=_tbw_basis(request, figures),
                error=float(watson_standard_error(request.patient.sex == "male")),
                sodium_error=limits.projection_sodium_error or 0.0,
                widened=WIDENED_NOTE.format(share=share) if widened else "",
            )
        )
    deficit = float(figures.free_water_deficit_l[0])
    if not math.isnan(deficit) and limits.sodium_fall_24h_warn is not None:
        notes.append(
            FREE_WATER_NOTE.format(
                target=limits.free_water_target_sodium, deficit=deficit, fall=limits.sodium_fall_24h_warn
            )
        )
    if agent is not None and agent.osmotically_active:
        notes.append(EQUIOSMOLAR_NOTE)
    return notes
