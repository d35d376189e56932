"""Back to the limit after an overcorrection: the volume of a hypotonic fluid, by the same balance.

When the measured sodium already rose past the 24 h refuse limit in force
(where the rise limits apply: `check.rules.rise_limits_in_force`), the plan
states how much of each fluid below the sodium now (5 % glucose first) would
bring sodium back to the lowest sodium of that window plus the limit.  The
volume is the engine's projection solved for the volume (`formulas.
volume_for_sodium_change`), worked with the smaller of the estimated and the
apparent total body water: the smaller volume, so the arithmetic itself does
not overshoot.  Re-lowering follows local protocol; this is the arithmetic
only, and it knows nothing of the losses that caused the overcorrection.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from datetime import datetime

import numpy as np

from osmodose.check.balance import agent_volumes_for_change
from osmodose.check.judging import threshold
from osmodose.check.results import AgentVolume
from osmodose.check.rules import rise_limits_in_force
from osmodose.course.projection import Projection
from osmodose.course.timeline import Timeline
from osmodose.formulary.model import Agent, Limits

RESCUE_CAUTION = (
    "Re-lowering after an overcorrection follows local protocol and licensed clinical judgement: these volumes "
    "are the balance's arithmetic, not an order; ongoing water losses make them too small. Re-measure sodium "
    "soon after starting."
)


@dataclass(frozen=True)
class Rescue:
    """The overcorrection and the volume of each hypotonic fluid that brings sodium back to the limit."""

    measured_rise_mmol_l: float
    limit_mmol_l: float
    lowest_sodium_mmol_l: float
    lowest_time: datetime
    latest_sodium_mmol_l: float
    latest_time: datetime
    from_sodium_mmol_l: float
    """The sodium now (the latest lab through the doses since), which the volumes start from."""
    target_sodium_mmol_l: float
    tbw_l: float
    volumes: tuple[AgentVolume, ...]
    caution: str = RESCUE_CAUTION


def overcorrection_rescue(
    timeline: Timeline, projection: Projection, limits: Limits, agents: Sequence[Agent], tbw_l: float
) -> Rescue | None:
    """None unless the rise into the latest lab is past the refuse limit in force and sodium is still above target."""
    labs = timeline.labs
    j = projection.lab_index
    rise = float(labs.sodium_window.rise[j])
    back = labs.sodium_lookback
    applies, _, refuse = rise_limits_in_force(limits, back.lowest_sodium[j : j + 1], back.high_risk[j : j + 1])
    limit = float(refuse[0])
    if not applies[0] or np.isnan(rise) or not threshold(np.array([rise]), None, limit)[0]:
        return None
    low = int(labs.sodium_window.low_index[j])
    target = float(labs.sodium[low]) + limit
    start = projection.sodium_now
    if start <= target:
        return None
    volumes = agent_volumes_for_change(np.array([start]), np.array([tbw_l]), np.array([target - start]), agents)[0]
    fluids = sorted(
        (a.cations_mmol_l, a.id, float(v))
        for a, v in zip(agents, volumes, strict=True)
        if a.projects_sodium and a.cations_mmol_l < start
    )
    return Rescue(
        measured_rise_mmol_l=rise,
        limit_mmol_l=limit,
        lowest_sodium_mmol_l=float(labs.sodium[low]),
        lowest_time=labs.times[low],
        latest_sodium_mmol_l=float(labs.sodium[j]),
        latest_time=labs.times[j],
        from_sodium_mmol_l=start,
        target_sodium_mmol_l=target,
        tbw_l=tbw_l,
        volumes=tuple(AgentVolume(agent=i, volume_ml=None if np.isnan(v) else v) for _, i, v in fluids),
    )
