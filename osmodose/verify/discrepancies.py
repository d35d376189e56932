"""Where the order as written disagrees with the recomputation, one finding each.

The prescriber's stated figures are claims; the recomputation from the
volume (`run_check`) is the truth the order will deliver.  Severities:

* A stated figure off by more than the tolerance (`dose_tolerance`, default
  10 %; `sodium_tolerance`, default 2 mmol/L) is a **warn**: rounding to a
  whole bag, a dose written loosely.  A verifier may accept it with a reason.
* Off by a factor of 2 or more, either way, is a **refuse**, whatever the
  tolerance: no rounding to a container doubles or halves a dose, while a
  slipped decimal point (10-fold), a mg/g or mL/L mix-up (1000-fold) or a
  weight in pounds taken for kg (2.2-fold) all land there.  The order
  contradicts itself and must be rewritten, not accepted (common practice:
  chosen so that every 10-fold error is refused).
* A volume that is no whole number of the unit's bags or vials is a **warn**:
  a part bag is often meant (350 mL drawn from 500 mL), but it is worth a look.
* An order naming no line for a central-only agent, or giving neither
  duration nor rate for an agent whose rate is judged (a maximum rate, or the
  default osmolar rate limits of a hypertonic agent), is a **warn that cannot
  be accepted**: the order is held until it says (high-alert agents; leaving a
  field out must never turn a refusal into a release).  No line for an agent
  above the peripheral osmolarity limit is a warn that may be accepted: the
  worst the line could give is that warning itself.

A rate above the agent's maximum and a central-only agent ordered peripheral
are the check's own refusals (`rate-too-fast`, `central-line-only`) and are
not repeated here.
"""

from __future__ import annotations

from collections.abc import Callable

from pydantic import BaseModel, ConfigDict

from osmodose.check.judging import severity_of
from osmodose.check.patient_rules import rate_judged_by_default
from osmodose.check.presentations import matches_presentation
from osmodose.check.results import CheckResult, DoseFigures, Severity
from osmodose.errors import InputError
from osmodose.formulary.model import Agent, Limits
from osmodose.science.formulas import infusion_rate
from osmodose.verify.order import Order

#: A stated figure this many times off (or this fraction of) the recomputed one is refused.
REFUSE_FACTOR = 2.0

STATED_DOSE_MISMATCH = "stated-dose-mismatch"
STATED_RATE_MISMATCH = "stated-rate-mismatch"
STATED_SODIUM_MISMATCH = "stated-sodium-mismatch"
VOLUME_NOT_A_PRESENTATION = "volume-not-a-presentation"
LINE_NOT_STATED = "line-not-stated"
DURATION_NOT_STATED = "duration-not-stated"

#: Every discrepancy code, for documentation and the screen's legend.
CODES: tuple[str, ...] = (
    STATED_DOSE_MISMATCH,
    STATED_RATE_MISMATCH,
    STATED_SODIUM_MISMATCH,
    VOLUME_NOT_A_PRESENTATION,
    LINE_NOT_STATED,
    DURATION_NOT_STATED,
)


class Discrepancy(BaseModel):
    """One disagreement between the order as written and the recomputation."""

    model_config = ConfigDict(frozen=True)

    code: str
    severity: Severity
    message: str
    stated: float | None
    recomputed: float | None
    unit: str
    acceptable: bool = True
    """False: a warning no reason can accept (the order must state what it leaves out)."""


def _judge_ratio(stated: float, recomputed: float, tolerance_percent: float) -> Severity | None:
    """refuse at 2-fold either way, warn beyond the tolerance, else None."""
    ratio = recomputed / stated
    if ratio >= REFUSE_FACTOR or ratio <= 1.0 / REFUSE_FACTOR:
        return "refuse"
    if severity_of(abs(ratio - 1.0), tolerance_percent / 100.0, None) is not None:
        return "warn"
    return None


def _by_ratio(
    code: str, stated: float, recomputed: float, unit: str, tolerance_percent: float, words: Callable[[], str]
) -> Discrepancy | None:
    """A stated figure against the recomputed one, judged by their ratio (`_judge_ratio`), worded once it is off."""
    severity = _judge_ratio(stated, recomputed, tolerance_percent)
    if severity is None:
        return None
    return Discrepancy(code=code, severity=severity, message=words(), stated=stated, recomputed=recomputed, unit=unit)


def _times(stated: float, recomputed: float) -> str:
    ratio = recomputed / stated
    return f"{ratio:.2g} times the stated" if ratio >= 1 else f"{ratio:.2g} of the stated"


def find_discrepancies(order: Order, result: CheckResult, agent: Agent, limits: Limits) -> list[Discrepancy]:
    """Every discrepancy of `order` against its recomputation `result`; refusals first."""
    dose = result.dose
    assert dose is not None, "verification always checks a dose"
    tolerance = limits.required("dose_tolerance")
    found = [
        _stated_dose(order, result, dose, agent, tolerance),
        _stated_rate(order, tolerance),
        _stated_sodium(order, result, agent, limits),
        _presentation(order, agent),
        _line(order, agent, limits),
        _duration(order, agent, limits),
    ]
    items = [d for d in found if d is not None]
    return sorted(items, key=lambda d: d.severity != "refuse")


def _recomputed_dose(order: Order, dose: DoseFigures, agent: Agent, weight_kg: float) -> float:
    """The ordered volume expressed in the stated dose's unit (per kg when stated per kg)."""
    stated = order.stated_dose
    assert stated is not None
    if stated.unit == "g":
        if dose.solute_g is None:
            raise InputError(
                "stated-dose", stated.text, f"is in grams, but {agent.id} is a mixed fluid", "mL, mmol or mOsm"
            )
        amount = dose.solute_g
    elif stated.unit == "mmol":
        if agent.sodium_mmol_l <= 0:
            raise InputError(
                "stated-dose", stated.text, f"is in mmol of sodium, but {agent.id} has no sodium", "g, mL or mOsm"
            )
        amount = dose.sodium_mmol
    elif stated.unit == "mOsm":
        amount = dose.osmoles_mosm
    else:
        amount = dose.volume_ml
    return amount / weight_kg if stated.per_kg else amount


def _stated_dose(
    order: Order, result: CheckResult, dose: DoseFigures, agent: Agent, tolerance: float
) -> Discrepancy | None:
    stated = order.stated_dose
    if stated is None:
        return None
    weight = result.patient.weight_kg
    recomputed = _recomputed_dose(order, dose, agent, weight)
    unit = stated.unit + ("/kg" if stated.per_kg else "")

    def words() -> str:
        volume_for_stated = order.volume_ml * stated.amount / recomputed if recomputed > 0 else None
        message = (
            f"stated dose {stated.label}, but {order.volume_ml:g} mL of {agent.id} is {recomputed:.3g} {unit}"
            + (f" for {weight:g} kg" if stated.per_kg else "")
            + f" ({_times(stated.amount, recomputed)} dose)"
        )
        if volume_for_stated is not None:
            message += f"; {stated.label} is {volume_for_stated:.0f} mL"
            if stated.per_kg:
                message += (
                    f"; the volume fits {stated.label} for a weight of {weight * recomputed / stated.amount:.0f} kg"
                )
        return message

    return _by_ratio(STATED_DOSE_MISMATCH, stated.amount, recomputed, unit, tolerance, words)


def _stated_rate(order: Order, tolerance: float) -> Discrepancy | None:
    if order.rate_ml_h is None or order.duration_min is None:
        return None
    # The rate the written duration gives, against the rate written beside it.
    from_duration = float(infusion_rate(order.volume_ml, order.duration_min))
    message = (
        f"stated rate {order.rate_ml_h:g} mL/h, but {order.volume_ml:g} mL over {order.duration_min:g} min "
        f"is {from_duration:.0f} mL/h; the faster is checked against the agent's maximum"
    )
    return _by_ratio(STATED_RATE_MISMATCH, order.rate_ml_h, from_duration, "mL/h", tolerance, lambda: message)


def _stated_sodium(order: Order, result: CheckResult, agent: Agent, limits: Limits) -> Discrepancy | None:
    stated = order.stated_sodium_mmol_l
    if stated is None:
        return None
    projected = result.projected_sodium_mmol_l
    if projected is None:
        raise InputError(
            "stated-sodium",
            order.entered.get("stated-sodium", f"{stated:g}"),
            f"cannot be checked: osmodose projects no sodium for {agent.id}",
            "leave it out for this agent",
        )
    tolerance = limits.required("sodium_tolerance")
    current = result.labs["sodium_mmol_l"]
    assert current is not None
    difference = abs(projected - stated)
    if severity_of(difference, tolerance, None) is None:
        return None
    stated_change = stated - current
    projected_change = projected - current
    # Compare the changes, not the levels: every sodium is near 140, so a
    # ratio of levels would hide a doubled rise.
    opposite = stated_change * projected_change <= 0
    severity: Severity = "refuse" if opposite else (_judge_ratio(stated_change, projected_change, 0.0) or "warn")
    message = (
        f"stated expected sodium {stated:g} mmol/L ({stated_change:+.1f}), but the projection is "
        f"{projected:.1f} mmol/L ({projected_change:+.1f}): {difference:.1f} mmol/L apart, "
        f"beyond the tolerance of {tolerance:g} mmol/L"
    )
    return Discrepancy(
        code=STATED_SODIUM_MISMATCH,
        severity=severity,
        message=message,
        stated=stated,
        recomputed=projected,
        unit="mmol/L",
    )


def _presentation(order: Order, agent: Agent) -> Discrepancy | None:
    sizes = agent.presentations_ml
    if not sizes or matches_presentation(order.volume_ml, sizes):
        return None
    kept = ", ".join(f"{s:g} mL" for s in sorted(sizes))
    message = f"{order.volume_ml:g} mL is not a whole number of the unit's {agent.id} stock ({kept})"
    return Discrepancy(
        code=VOLUME_NOT_A_PRESENTATION,
        severity="warn",
        message=message,
        stated=order.volume_ml,
        recomputed=None,
        unit="mL",
    )


def _line(order: Order, agent: Agent, limits: Limits) -> Discrepancy | None:
    """The line decides two of the check's rules; an order that names none cannot be judged on them."""
    if order.line is not None:
        return None
    if agent.central_only:
        message = f"{agent.id} is for a central line only and the order names no line: state the line"
        return _held(LINE_NOT_STATED, message)
    peripheral_limit = limits.peripheral_osmolarity_warn
    if peripheral_limit is None or agent.osmolarity_mosm_l <= peripheral_limit:
        return None
    message = (
        f"{agent.id} ({agent.osmolarity_mosm_l:.0f} mOsm/L) is above the peripheral-line limit of "
        f"{peripheral_limit:g} mOsm/L and the order names no line"
    )
    return Discrepancy(code=LINE_NOT_STATED, severity="warn", message=message, stated=None, recomputed=None, unit="")


def _duration(order: Order, agent: Agent, limits: Limits) -> Discrepancy | None:
    """No duration or rate for an agent whose rate is judged: held until the order states one."""
    if order.duration_for_check is not None:
        return None
    if agent.max_rate_ml_h is not None:
        message = (
            f"{agent.id} has a maximum rate of {agent.max_rate_ml_h:g} mL/h and the order gives neither duration "
            "nor rate: state one"
        )
        return _held(DURATION_NOT_STATED, message, agent.max_rate_ml_h, "mL/h")
    if not rate_judged_by_default(agent, limits):
        return None
    message = (
        f"{agent.id} ({agent.osmolarity_mosm_l:.0f} mOsm/L) is judged by the default osmolar rate limits and the "
        "order gives neither duration nor rate: state one"
    )
    return _held(DURATION_NOT_STATED, message, None, "mL/h")


def _held(code: str, message: str, recomputed: float | None = None, unit: str = "") -> Discrepancy:
    """A warning no reason can accept: the order is held until it states what it leaves out."""
    return Discrepancy(
        code=code, severity="warn", message=message, stated=None, recomputed=recomputed, unit=unit, acceptable=False
    )
