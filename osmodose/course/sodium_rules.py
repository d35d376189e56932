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

from osmodose.check.rules import RULES_BY_CODE, rise_limits_in_force
from osmodose.course.judging import CourseFinding, past_limit
from osmodose.course.multi_day import projected_multi_day_changes
from osmodose.course.projection import Projection
from osmodose.course.sodium_changes import MeasuredChange, ProjectedChange
from osmodose.course.timeline import LOOKBACK_H, SECONDS_PER_HOUR, WINDOW_H, Timeline, latest_lab_at, lookback
from osmodose.formulary.model import Limits


def sodium_window_findings(timeline: Timeline, limits: Limits) -> list[CourseFinding]:
    """The worst measured rise (where the rise limits apply) and the worst fall within any 24 h."""
    labs = timeline.labs
    if len(labs.t) < 2:
        return []
    window, back = labs.sodium_window, labs.sodium_lookback
    applies, rise_warn, rise_refuse = rise_limits_in_force(limits, back.lowest_sodium, back.high_risk)
    fall_warn, fall_refuse = RULES_BY_CODE["sodium-fall-24h"].named_limits(limits)
    rise = MeasuredChange(
        "sodium-rise-24h", window, "24 h", applies, rise_warn, rise_refuse, high_risk=back.high_risk, counted=True
    )
    fall = MeasuredChange("sodium-fall-24h", window, "24 h", True, fall_warn, fall_refuse, falling=True, counted=True)
    return [*rise.findings(labs), *fall.findings(labs)]


def projected_findings(
    timeline: Timeline, limits: Limits, projection: Projection, sodium: float, before: float, what: str
) -> list[CourseFinding]:
    """A projected sodium against the ceilings, the low limits (when lowered from `before`), and the 24 h limits.

    The rise is from the lowest, the fall from the highest sodium measured in
    the 24 h before (the latest lab when none is that recent); the 48 h and
    later-day limits follow (`multi_day`).
    """
    if np.isnan(sodium):
        return []
    labs = timeline.labs
    at = projection.at

    def high(severity: str, limit: float) -> str:
        return f"{what} {sodium:.1f} mmol/L is above the {severity} limit of {limit:g} mmol/L"

    def low(severity: str, limit: float) -> str:
        return (
            f"{what} {sodium:.1f} mmol/L, lowered from {before:.1f}, is below the {severity} limit of {limit:g} mmol/L"
        )

    ceilings = RULES_BY_CODE["projected-sodium-high"].named_limits(limits)
    found = past_limit("projected-sodium-high", sodium, ceilings, "mmol/L", at, high)
    if sodium < before:
        floors = RULES_BY_CODE["projected-sodium-low"].named_limits(limits)
        found += past_limit("projected-sodium-low", sodium, floors, "mmol/L", at, low, below=True)
    t_at = at.timestamp()
    inside = np.flatnonzero((labs.t >= t_at - WINDOW_H * SECONDS_PER_HOUR) & (labs.t <= t_at))
    if not len(inside):
        inside = np.asarray([latest_lab_at(labs, t_at)])
    t_from = min(t_at - LOOKBACK_H * SECONDS_PER_HOUR, float(labs.t[inside[0]]))
    back = lookback(labs.t, labs.sodium, labs.potassium, np.asarray([t_from]), np.asarray([t_at]))
    applies, warn_rise, refuse_rise = rise_limits_in_force(limits, back.lowest_sodium, back.high_risk)
    lowest = int(inside[np.argmin(labs.sodium[inside])])
    highest = int(inside[np.argmax(labs.sodium[inside])])
    fall_limits = RULES_BY_CODE["sodium-fall-24h"].named_limits(limits)
    rise = ProjectedChange(
        "projected-rise-24h", lowest, (warn_rise, float(refuse_rise[0])), "24 h", high_risk=bool(back.high_risk[0])
    )
    changes = [
        *([rise] if applies[0] else []),
        ProjectedChange("projected-fall-24h", highest, fall_limits, "24 h", "below"),
        *projected_multi_day_changes(labs, limits, at),
    ]
    return found + [x for change in changes for x in change.findings(labs, what, sodium, at)]
