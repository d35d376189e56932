"""Sodium rises over 48 h and over each 24 h after the first, and the 24 h rise already used.

Beside the 24 h windows (`course.sodium_rules`), two more limits judge a
correction of hyponatraemia across days, where the rise limits apply (the
lowest sodium of the 48 h up to the window's end below
`sodium_rise_applies_below`):

* the rise within any 48 h, refused above `sodium_rise_48h_refuse` (18 mmol/L:
  Verbalis JG et al. Am J Med 2013);
* the rise within a 24 h window that starts a day or more after the correction
  began, refused above `sodium_rise_later_24h_refuse` (8 mmol/L: "at most 8 in
  each later 24 h", Spasovski G et al. Eur J Endocrinol 2014, from memory of the
  numbers).  The correction begins at the lowest sodium measured in the 48 h up
  to the window's end; a window is a later one when its own lowest sample was
  drawn 24 h or more after that.

Both are judged through `check.judging.threshold`, like every limit, and worded
as the 24 h changes are (`course.sodium_changes`).
`rise_used` gives what a check or a plan shows as the rise already used: the
sodium now less the lowest measured in the 24 h before.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime

import numpy as np

from osmodose.check.rules import rise_limits_in_force
from osmodose.course.judging import CourseFinding
from osmodose.course.sodium_changes import MeasuredChange, ProjectedChange
from osmodose.course.timeline import LOOKBACK_H, SECONDS_PER_HOUR, WINDOW_H, LabColumns, Timeline, window_change
from osmodose.formulary.model import Limits

#: A 24 h window whose lowest sample is this long after the lowest of the correction is a later day's.
LATER_DAY_H = 24.0
LATER_DAY = "24 h, a day or more after the lowest sodium"


def multi_day_findings(timeline: Timeline, limits: Limits) -> list[CourseFinding]:
    """The worst measured rise over 48 h, and in a later 24 h, past its limit (where the rise limits apply)."""
    labs = timeline.labs
    if len(labs.t) < 2:
        return []
    back = labs.sodium_lookback
    applies, _, _ = rise_limits_in_force(limits, back.lowest_sodium, back.high_risk)
    window = labs.sodium_window
    two_days = window_change(labs.t, labs.sodium, LOOKBACK_H)
    # the correction's start: when the lowest sodium of the 48 h up to each lab was drawn (sliding: linear memory)
    nadir_t = labs.t[two_days.low_index]
    later = labs.t[window.low_index] >= nadir_t + LATER_DAY_H * SECONDS_PER_HOUR
    over_48h = MeasuredChange("sodium-rise-48h", two_days, "48 h", applies, None, limits.sodium_rise_48h_refuse)
    refuse_later = limits.sodium_rise_later_24h_refuse
    later_24h = MeasuredChange("sodium-rise-later-24h", window, LATER_DAY, applies & later, None, refuse_later)
    return [*over_48h.findings(labs), *later_24h.findings(labs)]


def projected_multi_day_changes(labs: LabColumns, limits: Limits, at: datetime) -> list[ProjectedChange]:
    """A sodium projected at `at` against the 48 h and later-day limits, from the labs measured before it."""
    t_at = at.timestamp()
    in_48 = np.flatnonzero((labs.t >= t_at - LOOKBACK_H * SECONDS_PER_HOUR) & (labs.t <= t_at))
    if not len(in_48):
        return []
    lowest = float(np.min(labs.sodium[in_48]))
    applies, _, _ = rise_limits_in_force(limits, np.array([lowest]), np.array([False]))
    if not applies[0]:
        return []
    nadir = int(in_48[np.argmin(labs.sodium[in_48])])
    in_24 = in_48[labs.t[in_48] >= t_at - WINDOW_H * SECONDS_PER_HOUR]
    low_24 = int(in_24[np.argmin(labs.sodium[in_24])]) if len(in_24) else None
    changes = [ProjectedChange("projected-rise-48h", nadir, (None, limits.sodium_rise_48h_refuse), "48 h")]
    if low_24 is not None and labs.t[low_24] >= labs.t[nadir] + LATER_DAY_H * SECONDS_PER_HOUR:
        changes.append(
            ProjectedChange("projected-rise-later-24h", low_24, (None, limits.sodium_rise_later_24h_refuse), LATER_DAY)
        )
    return changes


@dataclass(frozen=True)
class RiseUsed:
    """The rise already used in the 24 h before a time: from the lowest sodium measured in it."""

    rise_mmol_l: float
    from_sodium_mmol_l: float
    from_time: datetime


def rise_used(labs: LabColumns, at: datetime, sodium_now: float) -> RiseUsed | None:
    """`sodium_now` less the lowest sodium measured in the 24 h up to `at`; None when no lab is that recent."""
    t_at = at.timestamp()
    inside = np.flatnonzero((labs.t >= t_at - WINDOW_H * SECONDS_PER_HOUR) & (labs.t <= t_at))
    if not len(inside) or np.isnan(sodium_now):
        return None
    low = int(inside[np.argmin(labs.sodium[inside])])
    used = max(0.0, sodium_now - float(labs.sodium[low]))
    return RiseUsed(rise_mmol_l=used, from_sodium_mmol_l=float(labs.sodium[low]), from_time=labs.times[low])
