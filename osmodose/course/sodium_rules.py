"""Sodium over 24 h, measured and projected, against the rate limits and the ceilings.

The 24 h rise limits come from guidelines on correcting chronic hyponatraemia
(Verbalis JG et al. Am J Med 2013;126:S1-42; Spasovski G et al. Eur J
Endocrinol 2014;170:G1-47): they protect a brain adapted to a low sodium
from osmotic demyelination.  A rise is therefore judged only when the lowest
sodium measured in the 48 h up to the end of its window (the window's start
included) is below `sodium_rise_applies_below` (135 mmol/L: hyponatraemia).
Osmotherapy from a normal sodium (140 -> 151 in 12 h) is judged by the sodium
ceilings instead, while a correction from 125 yesterday to 136 now is still
judged.  When the risk of osmotic demyelination is high (sodium 105 mmol/L or
below, or potassium below 3.5 mmol/L, in those 48 h) the refuse limit is
`sodium_rise_24h_high_risk_refuse` (8 mmol/L, Verbalis 2013).

The 48 h limit and the limit on each later 24 h are in `course.multi_day`.

Falls are judged whatever the sodium: `sodium_fall_24h_warn` / `_refuse`; and
a projected sodium that a dose lowers is judged against `sodium_low_warn` /
`_refuse`.
"""

from __future__ import annotations

import numpy as np

from osmodose.check.judging import (
    HIGH_RISK_POTASSIUM_BELOW,
    HIGH_RISK_SODIUM_AT_MOST,
    SEVERITY_NAMES,
    Severity,
    limit_crossed,
    severity_of,
    threshold,
    worst_index,
)
from osmodose.check.rules import RULES_BY_CODE, rise_limits_in_force
from osmodose.course.judging import CourseFinding, when
from osmodose.course.multi_day import projected_multi_day_findings
from osmodose.course.projection import Projection
from osmodose.course.timeline import LOOKBACK_H, SECONDS_PER_HOUR, WINDOW_H, Timeline, latest_lab_at, lookback
from osmodose.formulary.model import Limits

HIGH_RISK_WORDS = (
    f"high risk of osmotic demyelination: sodium {HIGH_RISK_SODIUM_AT_MOST:g} mmol/L or below, "
    f"or potassium below {HIGH_RISK_POTASSIUM_BELOW:g} mmol/L, within 48 h"
)


def _num(value: float | None) -> float:
    return np.nan if value is None else float(value)


def sodium_window_findings(timeline: Timeline, limits: Limits) -> list[CourseFinding]:
    """The worst measured rise (where the rise limits apply) and the worst fall within any 24 h."""
    labs = timeline.labs
    if len(labs.t) < 2:
        return []
    window, back = labs.sodium_window, labs.sodium_lookback
    applies, rise_warn, rise_refuse = rise_limits_in_force(limits, back.lowest_sodium, back.high_risk)
    fall_warn, fall_refuse = RULES_BY_CODE["sodium-fall-24h"].named_limits(limits)
    out: list[CourseFinding] = []
    for code, change, severity, start_index, verb, warn, refuse, risky in (
        (
            "sodium-rise-24h",
            window.rise,
            np.where(applies, threshold(window.rise, rise_warn, rise_refuse), 0),
            window.low_index,
            "rose",
            np.full(len(labs.t), rise_warn),
            rise_refuse,
            back.high_risk,
        ),
        (
            "sodium-fall-24h",
            window.fall,
            threshold(window.fall, fall_warn, fall_refuse),
            window.high_index,
            "fell",
            np.full(len(labs.t), _num(fall_warn)),
            np.full(len(labs.t), _num(fall_refuse)),
            np.zeros(len(labs.t), dtype=bool),
        ),
    ):
        if not np.any(severity):
            continue
        j = worst_index(severity, change)
        name = SEVERITY_NAMES[int(severity[j])]
        limit = float(refuse[j] if name == "refuse" else warn[j])
        value, i = float(change[j]), int(start_index[j])
        crossed = int(np.count_nonzero(severity))
        message = (
            f"measured sodium {verb} {value:.1f} mmol/L within 24 h (from {labs.sodium[i]:.1f} at "
            f"{when(labs.times[i])} to {labs.sodium[j]:.1f} at {when(labs.times[j])}), above the {name} "
            f"limit of {limit:g} mmol/L"
            + (f" ({HIGH_RISK_WORDS})" if risky[j] else "")
            + (f" ({crossed} of {len(labs.t)} labs crossing a limit)" if len(labs.t) > 1 else "")
        )
        out.append(
            CourseFinding(
                code=code,
                severity=name,
                message=message,
                value=value,
                limit=limit,
                unit="mmol/L",
                time=labs.times[j],
            )
        )
    return out


def projected_findings(
    timeline: Timeline, limits: Limits, projection: Projection, sodium: float, before: float, what: str
) -> list[CourseFinding]:
    """A projected sodium against the ceilings, the low limits (when lowered from `before`), and the 24 h limits.

    The rise is from the lowest, the fall from the highest sodium measured in
    the 24 h before (the latest lab when none is that recent).
    """
    out: list[CourseFinding] = []
    if np.isnan(sodium):
        return out
    labs = timeline.labs
    at = projection.at

    def add(code: str, severity: Severity, message: str, value: float, limit: float | None) -> None:
        out.append(
            CourseFinding(
                code=code,
                severity=severity,
                message=message,
                value=value,
                limit=limit,
                unit="mmol/L",
                time=at,
            )
        )

    warn, refuse = RULES_BY_CODE["projected-sodium-high"].named_limits(limits)
    if (severity := severity_of(sodium, warn, refuse)) is not None:
        limit = limit_crossed(severity, warn, refuse)
        add(
            "projected-sodium-high",
            severity,
            f"{what} {sodium:.1f} mmol/L is above the {severity} limit of {limit:g} mmol/L",
            sodium,
            limit,
        )
    warn, refuse = RULES_BY_CODE["projected-sodium-low"].named_limits(limits)
    if sodium < before and (severity := severity_of(sodium, warn, refuse, below=True)) is not None:
        limit = limit_crossed(severity, warn, refuse)
        add(
            "projected-sodium-low",
            severity,
            f"{what} {sodium:.1f} mmol/L, lowered from {before:.1f}, is below the {severity} limit of {limit:g} mmol/L",
            sodium,
            limit,
        )
    t_at = at.timestamp()
    inside = np.flatnonzero((labs.t >= t_at - WINDOW_H * SECONDS_PER_HOUR) & (labs.t <= t_at))
    if not len(inside):
        inside = np.asarray([latest_lab_at(labs, t_at)])
    t_from = min(t_at - LOOKBACK_H * SECONDS_PER_HOUR, float(labs.t[inside[0]]))
    back = lookback(labs.t, labs.sodium, labs.potassium, np.asarray([t_from]), np.asarray([t_at]))
    applies, warn_rise, refuse_rise = rise_limits_in_force(limits, back.lowest_sodium, back.high_risk)
    low = int(inside[np.argmin(labs.sodium[inside])])
    high = int(inside[np.argmax(labs.sodium[inside])])
    fall_warn, fall_refuse = RULES_BY_CODE["sodium-fall-24h"].named_limits(limits)
    for code, change, start, direction, warn, refuse, judged, risky in (
        ("projected-rise-24h", sodium - float(labs.sodium[low]), low, "above", warn_rise, float(refuse_rise[0]),
         bool(applies[0]), bool(back.high_risk[0])),
        ("projected-fall-24h", float(labs.sodium[high]) - sodium, high, "below", fall_warn, fall_refuse, True,
         False),
    ):  # fmt: skip
        severity = severity_of(change, warn, refuse) if judged else None
        if severity is None:
            continue
        limit = limit_crossed(severity, warn, refuse)
        message = (
            f"{what} {sodium:.1f} mmol/L is {change:.1f} {direction} the {labs.sodium[start]:.1f} measured at "
            f"{when(labs.times[start])}, above the {severity} limit of {limit:g} mmol/L in 24 h"
            + (f" ({HIGH_RISK_WORDS})" if risky else "")
        )
        add(code, severity, message, change, limit)
    return out + projected_multi_day_findings(labs, limits, at, sodium, what)
