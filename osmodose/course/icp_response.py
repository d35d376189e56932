"""The ICP response to each dose: why osmotherapy is given, and whether this patient still responds.

For each dose with ICP readings around it: the ICP before (the latest reading
within `icp_response_before_h` before the start, the start included), the
lowest ICP within `icp_response_after_h` after the start, and how long the ICP
stayed at or below the treatment threshold (`icp_treat_above`, 22 mmHg: Brain
Trauma Foundation guidelines, 4th ed., Carney N et al. Neurosurgery 2017):
from the first reading after the start at or below it to the first later
reading above it.  Only readings before the next dose's start count, so each
dose keeps its own response; when the ICP is still at or below the threshold
at the last such reading the time is a lower bound ("at least").  Readings
are points: the ICP between them is not known.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass
from datetime import datetime

import numpy as np

from osmodose.check.judging import threshold
from osmodose.course.timeline import SECONDS_PER_HOUR, Timeline
from osmodose.formulary.model import Limits


@dataclass(frozen=True)
class IcpResponse:
    """One dose's ICP response; None where the readings do not tell."""

    dose_row: int
    before_mmhg: float | None
    before_time: datetime | None
    lowest_mmhg: float | None
    lowest_time: datetime | None
    below_h: float | None
    """Hours at or below the threshold; None with no reading after the start (before the next dose)."""
    below_at_least: bool
    """True when the ICP was still at or below the threshold at the last reading counted."""
    threshold_mmhg: float

    @property
    def fall_mmhg(self) -> float | None:
        """Before minus lowest after: how far the ICP fell."""
        if self.before_mmhg is None or self.lowest_mmhg is None:
            return None
        return self.before_mmhg - self.lowest_mmhg


def icp_responses(timeline: Timeline, limits: Limits) -> list[IcpResponse]:
    """The response of every dose that has a reading before or after it (in dose order)."""
    readings, doses = timeline.readings, timeline.doses
    if not len(readings.t) or not len(doses.t):
        return []
    before_h = limits.icp_response_before_h or 0.0
    after_h = limits.icp_response_after_h or 0.0
    limit = limits.icp_treat_above
    out = []
    for row in range(len(doses.t)):
        start = float(doses.t[row])
        t_next = float(np.min(doses.t[doses.t > start])) if np.any(doses.t > start) else np.inf
        before = np.flatnonzero((readings.t >= start - before_h * SECONDS_PER_HOUR) & (readings.t <= start))
        after = np.flatnonzero((readings.t > start) & (readings.t <= start + after_h * SECONDS_PER_HOUR))
        if not len(before) and not len(after):
            continue
        b = int(before[-1]) if len(before) else None
        low = int(after[np.argmin(readings.icp[after])]) if len(after) else None
        below, at_least = (None, False) if limit is None else _time_below(timeline, start, t_next, limit)
        out.append(
            IcpResponse(
                dose_row=row,
                before_mmhg=None if b is None else float(readings.icp[b]),
                before_time=None if b is None else readings.times[b],
                lowest_mmhg=None if low is None else float(readings.icp[low]),
                lowest_time=None if low is None else readings.times[low],
                below_h=below,
                below_at_least=at_least,
                threshold_mmhg=float(limit) if limit is not None else float("nan"),
            )
        )
    return out


def _time_below(timeline: Timeline, start: float, t_next: float, limit: float) -> tuple[float | None, bool]:
    """(hours at or below `limit` from the first such reading after `start`, still below at the last reading)."""
    readings = timeline.readings
    counted = np.flatnonzero((readings.t > start) & (readings.t < t_next))
    if not len(counted):
        return None, False
    above = threshold(readings.icp[counted], limit, None) > 0
    first_below = np.flatnonzero(~above)
    if not len(first_below):
        return 0.0, False
    k = int(first_below[0])
    later_above = np.flatnonzero(above[k:])
    if len(later_above):
        end = float(readings.t[counted[k + int(later_above[0])]])
        return (end - float(readings.t[counted[k]])) / SECONDS_PER_HOUR, False
    return (float(readings.t[counted[-1]]) - float(readings.t[counted[k]])) / SECONDS_PER_HOUR, True


def response_text(response: IcpResponse) -> str:
    """ "ICP 28 -> 19 (lowest within 2 h); at or below 22 for 3.0 h" as the timeline shows it."""
    parts = []
    before = "n/a" if response.before_mmhg is None else f"{response.before_mmhg:.0f}"
    lowest = "n/a" if response.lowest_mmhg is None else f"{response.lowest_mmhg:.0f}"
    parts.append(f"ICP {before} -> {lowest}")
    below, limit = response.below_h, f"{response.threshold_mmhg:g}"
    if below is not None:
        if response.below_at_least:
            parts.append(
                f"at or below {limit} for at least {below:.1f} h"
                if below
                else f"at or below {limit} at the last reading"
            )
        else:
            parts.append(
                f"at or below {limit} for {below:.1f} h" if below else f"above {limit} at every reading after it"
            )
    return "; ".join(parts)


def by_agent(responses: Iterable[IcpResponse], agent_ids: tuple[str, ...]) -> dict[str, list[float]]:
    """The ICP falls per agent, in dose order: does this patient still respond, and to which agent?"""
    falls: dict[str, list[float]] = {}
    for response in responses:
        fall = response.fall_mmhg
        if fall is not None:
            falls.setdefault(agent_ids[response.dose_row], []).append(fall)
    return falls
