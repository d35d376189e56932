"""The plot's data as plain lists of floats, for any drawing front end.

The PNG/SVG plot (`plot.py`) and a terminal plotting widget in the app draw
the same series from here, so both show the same projection and the same
limit lines.  The x axis is hours since `origin` (the episode's first entry);
a limit the formulary leaves unset is None and is not drawn.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from datetime import datetime

from osmodose.course.episode import Episode
from osmodose.course.projection import episode_tbw_l, projected_path
from osmodose.course.timeline import SECONDS_PER_HOUR, build_timeline
from osmodose.course.times import in_display_offset
from osmodose.formulary.model import Formulary

Floats = tuple[float, ...]


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

    @property
    def empty(self) -> bool:
        return not (self.lab_hours or self.reading_hours)


def course_series(episode: Episode, formulary: Formulary) -> CourseSeries:
    """The plot series of an episode under a formulary's limits, its times in the episode's offset."""
    episode = in_display_offset(episode)
    timeline = build_timeline(episode, formulary)
    origin = episode.start()
    t0 = origin.timestamp() if origin is not None else 0.0

    def hours(values: object) -> Floats:
        return tuple((float(v) - t0) / SECONDS_PER_HOUR for v in values)  # type: ignore[attr-defined]

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
    return CourseSeries(
        origin=origin,
        lab_hours=hours(timeline.labs.t),
        sodium=tuple(float(x) for x in timeline.labs.sodium),
        projected=tuple(segments),
        dose_hours=hours(timeline.doses.t),
        dose_labels=tuple(f"{d.agent_id} {d.volume_ml:g} mL" for d in doses),
        reading_hours=hours(timeline.readings.t),
        icp=tuple(float(x) for x in timeline.readings.icp),
        cpp=tuple(float(x) for x in timeline.readings.cpp),
        sodium_warn=limits.get("sodium_warn"),
        sodium_refuse=limits.get("sodium_refuse"),
        icp_treat_above=limits.get("icp_treat_above"),
        cpp_target_min=limits.get("cpp_target_min"),
    )
