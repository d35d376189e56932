"""The plot's data as plain lists of floats, for any drawing front end.

The PNG/SVG plot (`plot.py`) and a terminal plotting widget in the app draw
the same series from here, so both show the same projection and the same
limit lines.  The x axis is hours since `origin` (the episode's first entry);
a limit the formulary leaves unset is None and is not drawn.
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import dataclass
from datetime import datetime

import numpy as np

from osmodose.course.episode import Episode
from osmodose.course.icp_response import icp_responses
from osmodose.course.projection import episode_tbw_l, projected_path
from osmodose.course.timeline import SECONDS_PER_HOUR, build_timeline
from osmodose.course.times import in_display_offset
from osmodose.formulary.model import Formulary
from osmodose.science.precision import figure_text

Floats = tuple[float, ...]


def volume_text(volume_ml: float) -> str:
    """A dose's volume for a label: "350 mL", "62.5 mL" (to 0.1 mL, as every output reads volumes)."""
    text = figure_text("volume_ml", volume_ml)
    return f"{text.removesuffix('.0')} mL"


@dataclass(frozen=True)
class CourseSeries:
    """Everything the sodium panel and the pressure panel draw."""

    origin: datetime | None
    """Time of hour 0 (the first entry); None for an empty episode."""
    lab_hours: Floats
    sodium: Floats
    """Measured sodium, mmol/L, at `lab_hours`."""
    projected: tuple[tuple[Floats, Floats], ...]
    """One (hours, sodium) line per lab: from the measured value through each dose given before the next lab."""
    dose_hours: Floats
    dose_labels: tuple[str, ...]
    """Start of each dose and "agent volume mL", for markers."""
    reading_hours: Floats
    icp: Floats
    cpp: Floats
    """ICP and CPP (MAP - ICP), mmHg, at `reading_hours`."""
    sodium_warn: float | None
    sodium_refuse: float | None
    icp_treat_above: float | None
    cpp_target_min: float | None
    icp_responses: tuple[tuple[float, float, float, float], ...] = ()
    """Per dose with readings before and after it: (hours, ICP before, hours, lowest ICP within the window)."""
    measured_osmolality: Floats = ()
    calculated_osmolality: Floats = ()
    osmolar_gap: Floats = ()
    """mOsm/kg at `lab_hours` (NaN where a lab cannot give it), for the osmolality panel."""
    mannitol_given: bool = False
    """Whether the episode has a mannitol dose: the plot then adds the osmolality and osmolar-gap panel."""
    osmolality_warn: float | None = None
    osmolality_refuse: float | None = None
    gap_warn: float | None = None
    gap_refuse: float | None = None
    demo: bool = False
    """True while the bundled demo formulary (an invented unit) is in use: the plot says DEMO."""

    @property
    def empty(self) -> bool:
        return not (self.lab_hours or self.reading_hours)


def course_series(episode: Episode, formulary: Formulary) -> CourseSeries:
    """The plot series of an episode under a formulary's limits, its times in the episode's offset."""
    episode = in_display_offset(episode)
    timeline = build_timeline(episode, formulary)
    origin = episode.start()
    t0 = origin.timestamp() if origin is not None else 0.0

    def hours(values: Iterable[float]) -> Floats:
        return tuple((float(v) - t0) / SECONDS_PER_HOUR for v in values)

    segments: list[tuple[Floats, Floats]] = []
    if len(timeline.labs.t):
        path = projected_path(timeline, episode_tbw_l(episode, formulary))
        t_line: list[float] = []
        na_line: list[float] = []
        for t, na in zip(path.t.tolist(), path.sodium.tolist(), strict=True):
            if math.isnan(t):
                segments.append((hours(t_line), tuple(na_line)))
                t_line, na_line = [], []
            else:
                t_line.append(t)
                na_line.append(na)
    doses = episode.doses
    limits = formulary.limits
    responses = tuple(
        (hours([r.before_time.timestamp()])[0], r.before_mmhg, hours([r.lowest_time.timestamp()])[0], r.lowest_mmhg)
        for r in icp_responses(timeline, limits)
        if r.before_time is not None and r.before_mmhg is not None
        and r.lowest_time is not None and r.lowest_mmhg is not None
    )  # fmt: skip
    return CourseSeries(
        origin=origin,
        lab_hours=hours(timeline.labs.t),
        sodium=tuple(float(x) for x in timeline.labs.sodium),
        projected=tuple(segments),
        dose_hours=hours(timeline.doses.t),
        dose_labels=tuple(f"{d.agent_id} {volume_text(d.volume_ml)}" for d in doses),
        reading_hours=hours(timeline.readings.t),
        icp=tuple(float(x) for x in timeline.readings.icp),
        cpp=tuple(float(x) for x in timeline.readings.cpp),
        sodium_warn=limits.sodium_warn,
        sodium_refuse=limits.sodium_refuse,
        icp_treat_above=limits.icp_treat_above,
        cpp_target_min=limits.cpp_target_min,
        icp_responses=responses,
        measured_osmolality=tuple(float(x) for x in timeline.labs.measured_osmolality),
        calculated_osmolality=tuple(float(x) for x in timeline.labs.calculated_osmolality),
        osmolar_gap=tuple(float(x) for x in timeline.labs.gap),
        mannitol_given=bool(np.any(timeline.doses.agent.is_mannitol)),
        osmolality_warn=limits.osmolality_warn,
        osmolality_refuse=limits.osmolality_refuse,
        gap_warn=limits.osmolar_gap_warn,
        gap_refuse=limits.osmolar_gap_refuse,
        demo=formulary.demo,
    )
