"""Findings across a course of therapy, against the formulary's `[limits]`.

Each rule reads whole columns of the timeline and reports its worst instance
(the largest rise, the highest sodium, the lowest CPP), naming its time, with
how many entries crossed the limit.  Limits are judged as in a check, by
`osmodose.check.judging.threshold` (see `course.judging`): a figure strictly above
(or, for CPP, strictly below) the limit fires, and one within rounding of the
limit is at it.  Every default and its source is in
`osmodose.formulary.limits`; ICP 22 mmHg and CPP 60 mmHg come from the Brain
Trauma Foundation guidelines, 4th edition (Carney N et al. Neurosurgery
2017;80:6-15).  A figure that cannot be computed (NaN) never fires: its
absence is shown as such.  The sodium rate rules are in `course.sodium_rules`.
"""

from __future__ import annotations

from datetime import datetime

import numpy as np

from osmodose.check.judging import count_crossing, limit_crossed, severity_of, threshold
from osmodose.check.rules import RULES_BY_CODE
from osmodose.course.judging import CourseFinding, crossing_count, past_limit, when
from osmodose.course.multi_day import multi_day_findings
from osmodose.course.projection import Projection
from osmodose.course.sodium_rules import projected_findings, sodium_window_findings
from osmodose.course.timeline import (
    SECONDS_PER_HOUR,
    LabColumns,
    ReadingColumns,
    Timeline,
    gap_rise_across_mannitol,
    latest_measured_osmolality,
    latest_time,
)
from osmodose.formulary.model import Limits

__all__ = ["CourseFinding", "course_findings", "lab_age_h", "mannitol_24h", "projected_findings", "when"]


def course_findings(timeline: Timeline, limits: Limits, projection: Projection | None = None) -> list[CourseFinding]:
    """Every course finding, refusals first."""
    found = [
        *sodium_window_findings(timeline, limits),
        *multi_day_findings(timeline, limits),
        *_ceilings(timeline, limits, projection.at.timestamp() if projection is not None else latest_time(timeline)),
        *_osmolar_gap(timeline, limits),
        *_mannitol_24h(timeline, limits),
        *_pressures(timeline, limits),
        *_stale_labs(timeline, limits),
    ]
    if projection is not None and projection.moved:  # with nothing since, the measured rules say it all
        found += projected_findings(
            timeline, limits, projection, projection.sodium_now, projection.lab_sodium, "projected sodium now"
        )
    found.sort(key=lambda item: item.severity != "refuse")
    return found


def _ceilings(timeline: Timeline, limits: Limits, at: float | None) -> list[CourseFinding]:
    """The value now against the ceilings (what the next dose starts from); an earlier peak only warns.

    Sodium now is the latest lab's.  Osmolality now is judged on the latest
    lab's (measured, else calculated) and on the latest measured osmolality
    while it is within `lab_max_age` of `at` (a newer lab with only a
    calculated osmolality does not hide a measured one a few hours older): the
    worse of the two, a measured one saying its age.
    """
    labs = timeline.labs
    out: list[CourseFinding] = []
    for code, what, values in (
        ("sodium-high", "measured sodium", labs.sodium),
        ("osmolality-high", "osmolality", labs.osmolality),
    ):
        known = np.flatnonzero(np.isfinite(values))
        if not len(known):
            continue
        rule = RULES_BY_CODE[code]
        unit = rule.unit
        warn, refuse = rule.named_limits(limits)

        def label(j: int, what: str = what, code: str = code) -> str:
            if code != "osmolality-high":
                return what
            return ("measured " if np.isfinite(labs.measured_osmolality[j]) else "calculated ") + what

        latest = int(known[-1])
        now = [latest]
        measured = None
        if code == "osmolality-high" and at is not None:
            measured = latest_measured_osmolality(labs, at, limits.lab_max_age)
            if measured is not None and measured != latest:
                now.append(measured)
        rank = {None: 0, "warn": 1, "refuse": 2}
        judged = max(reversed(now), key=lambda j: rank[severity_of(float(values[j]), warn, refuse)])
        peak = int(known[np.argmax(values[known])])
        crossed = crossing_count(count_crossing(values, warn if warn is not None else refuse), len(labs.t), "labs")
        severity = severity_of(float(values[judged]), warn, refuse)
        if severity is not None:
            limit = refuse if severity == "refuse" else warn
            which = "the latest" if judged == latest else f"the latest measured, {_age(labs, judged, at)}"
            message = (
                f"{label(judged)} {values[judged]:.1f} {unit} at {when(labs.times[judged])} ({which}) "
                f"is above the {severity} limit of {limit:g} {unit}"
                + crossed
                + _stale_measured(labs, limits, at, code, measured)
            )
            name, found_at, value = code, judged, float(values[judged])
        else:
            severity = severity_of(float(values[peak]), warn, refuse)
            if severity is None:
                continue
            limit = refuse if severity == "refuse" else warn
            message = (
                f"{label(peak)} {values[peak]:.1f} {unit} at {when(labs.times[peak])} was above the {severity} "
                f"limit of {limit:g} {unit}; the latest is {values[latest]:.1f} at {when(labs.times[latest])}"
                + _stale_measured(labs, limits, at, code, measured)
            )
            name, severity, found_at, value = code.replace("-high", "-was-high"), "warn", peak, float(values[peak])
        out.append(
            CourseFinding(
                code=name,
                severity=severity,
                message=message,
                value=value,
                limit=limit,
                unit=unit,
                time=labs.times[found_at],
            )
        )
    return out


def _age(labs: LabColumns, j: int, at: float | None) -> str:
    """ "3.0 h old at <time>": how old a lab is at the review's time."""
    if at is None:
        return "age unknown"
    hours = (at - float(labs.t[j])) / SECONDS_PER_HOUR
    moment = datetime.fromtimestamp(at, labs.times[j].tzinfo)
    return f"{hours:.1f} h old at {when(moment)}"


def _stale_measured(labs: LabColumns, limits: Limits, at: float | None, code: str, measured: int | None) -> str:
    """For osmolality: a measured one too old to judge now is named, with its age, so it is re-measured."""
    if code != "osmolality-high" or at is None or measured is not None:
        return ""
    older = latest_measured_osmolality(labs, at)
    if older is None or older == len(labs.t) - 1:
        return ""
    return (
        f"; the latest measured ({labs.measured_osmolality[older]:.1f} at {when(labs.times[older])}) is "
        f"{_age(labs, older, at)}, older than the {limits.lab_max_age:g} h limit: re-measure"
    )


def _osmolar_gap(timeline: Timeline, limits: Limits) -> list[CourseFinding]:
    """A gap growing across mannitol doses (mannitol accumulating), and a high gap after mannitol."""
    labs, doses = timeline.labs, timeline.doses
    out: list[CourseFinding] = []
    has_gap = np.flatnonzero(np.isfinite(labs.gap))
    if not len(has_gap) or not np.any(doses.agent.is_mannitol):
        return out
    t, gap = labs.t[has_gap], labs.gap[has_gap]
    rise_limit = limits.osmolar_gap_rise_warn
    if rise_limit is not None and len(has_gap) > 1:
        value, j, i = gap_rise_across_mannitol(t, gap, doses)  # sliding: no labs x labs matrix

        def rising(_severity: str, limit: float) -> str:
            return (
                f"osmolar gap rose {value:.1f} mOsm/kg across mannitol (from {gap[i]:.1f} at "
                f"{when(labs.times[has_gap[i]])} to {gap[j]:.1f} at {when(labs.times[has_gap[j]])}), above the "
                f"warn limit of {limit:g} mOsm/kg: mannitol may be accumulating"
            )

        out += past_limit("osmolar-gap-rising", value, (rise_limit, None), "mOsm/kg", labs.times[has_gap[j]], rising)
    out += _gap_after_mannitol(timeline, limits, has_gap, float(np.min(doses.t[doses.agent.is_mannitol])))
    return out


def _gap_after_mannitol(
    timeline: Timeline, limits: Limits, has_gap: np.ndarray, first_mannitol: float
) -> list[CourseFinding]:
    """The latest gap after mannitol against warn/refuse; an earlier high gap, once it has come down, only warns.

    A gap above about 20 mOsm/kg during mannitol is a common hold threshold
    (common practice; sources vary from 10 to 20); above 10 is above the
    published upper normal (McMaster Textbook of Internal Medicine).
    """
    labs = timeline.labs
    warn, refuse = RULES_BY_CODE["osmolar-gap-high"].named_limits(limits)
    after = has_gap[labs.t[has_gap] > first_mannitol]
    if not len(after):
        return []
    latest, peak = int(after[-1]), int(after[np.argmax(labs.gap[after])])
    crossed = crossing_count(count_crossing(labs.gap[after], warn if warn is not None else refuse), len(after), "gaps")
    code = "osmolar-gap-high"
    severity = severity_of(float(labs.gap[latest]), warn, refuse) if latest == int(has_gap[-1]) else None
    if severity is not None:
        limit = limit_crossed(severity, warn, refuse)
        found_at = latest
        message = (
            f"osmolar gap {labs.gap[latest]:.1f} mOsm/kg at {when(labs.times[latest])} (the latest), after "
            f"mannitol, is above the {severity} limit of {limit:g} mOsm/kg" + crossed
        )
    else:
        severity = severity_of(float(labs.gap[peak]), warn, refuse)
        if severity is None:
            return []
        limit, found_at, code = limit_crossed(severity, warn, refuse), peak, "osmolar-gap-was-high"
        message = (
            f"osmolar gap {labs.gap[peak]:.1f} mOsm/kg at {when(labs.times[peak])}, after mannitol, was above the "
            f"{severity} limit of {limit:g} mOsm/kg; the latest is {labs.gap[has_gap[-1]]:.1f} at "
            f"{when(labs.times[has_gap[-1]])}"
        )
        severity = "warn"
    return [
        CourseFinding(
            code=code,
            severity=severity,
            message=message,
            value=float(labs.gap[found_at]),
            limit=limit,
            unit="mOsm/kg",
            time=labs.times[found_at],
        )
    ]


def _mannitol_24h(timeline: Timeline, limits: Limits) -> list[CourseFinding]:
    doses = timeline.doses
    limit = limits.mannitol_24h_max
    rows = np.flatnonzero(doses.agent.is_mannitol)
    if limit is None or not len(rows):
        return []
    j = int(rows[np.argmax(doses.mannitol_24h_g_per_kg[rows])])
    within = f"the 24 h up to the dose at {when(doses.times[j])}"
    return mannitol_24h(float(doses.mannitol_24h_g_per_kg[j]), limit, within, doses.times[j])


def mannitol_24h(g_per_kg: float, limit: float, within: str, time: datetime) -> list[CourseFinding]:
    """Mannitol given within 24 h (`within` says which) above the unit's `mannitol_24h_max`: a warning."""

    def words(_severity: str, limit: float) -> str:
        return f"mannitol {g_per_kg:.2f} g/kg within {within} is above the warn limit of {limit:g} g/kg"

    return past_limit("mannitol-24h", g_per_kg, (limit, None), "g/kg", time, words)


#: The words of the pressure findings, over the reading judged and the limit (Carney 2017).
_PRESSURE_WORDS = {
    "icp-high": "ICP {icp:.0f} mmHg at {time} is above the treatment threshold of {limit:g} mmHg",
    "cpp-low": "CPP {cpp:.0f} mmHg (MAP {map:.0f} - ICP {icp:.0f}) at {time} is below the target of {limit:g} mmHg",
}


def _pressures(timeline: Timeline, limits: Limits) -> list[CourseFinding]:
    r = timeline.readings
    if not len(r.t):
        return []
    icp = _pressure(r, "icp-high", r.icp, limits.icp_treat_above)
    return icp + _pressure(r, "cpp-low", r.cpp, limits.cpp_target_min, below=True)


def _pressure(
    r: ReadingColumns, code: str, values: np.ndarray, limit: float | None, below: bool = False
) -> list[CourseFinding]:
    """The worst reading past its limit (the highest ICP, the lowest CPP) warns, saying how many crossed it."""
    j = int(np.argmin(values) if below else np.argmax(values))

    def words(_severity: str, limit: float) -> str:
        said = _PRESSURE_WORDS[code].format(
            icp=r.icp[j], cpp=r.cpp[j], map=r.map[j], time=when(r.times[j]), limit=limit
        )
        return said + crossing_count(count_crossing(values, limit, below=below), len(r.t), "readings")

    return past_limit(code, float(values[j]), (limit, None), "mmHg", r.times[j], words, below=below)


def lab_age_h(timeline: Timeline, t: np.ndarray) -> np.ndarray:
    """Hours from the latest lab at or before each time to it; inf where no lab came before."""
    labs = timeline.labs
    index = np.searchsorted(labs.t, t, side="right") - 1
    drawn = np.where(index >= 0, labs.t[np.maximum(index, 0)] if len(labs.t) else 0.0, np.nan)
    return np.where(index >= 0, (t - drawn) / SECONDS_PER_HOUR, np.inf)


def _stale_labs(timeline: Timeline, limits: Limits) -> list[CourseFinding]:
    doses = timeline.doses
    limit = limits.lab_max_age
    if limit is None or not len(doses.t):
        return []
    age = lab_age_h(timeline, doses.t)
    stale = np.flatnonzero(threshold(age, limit, None))
    if not len(stale):
        return []
    j = int(stale[np.argmax(age[stale])])
    value = float(age[j])
    basis = (
        "with no labs before it" if np.isinf(value) else f"on labs {value:.1f} h old, older than the {limit:g} h limit"
    )
    message = f"the dose of {doses.agent_ids[j]} at {when(doses.times[j])} was given {basis}" + crossing_count(
        len(stale), len(doses.t), "doses"
    )
    return [
        CourseFinding(
            code="labs-too-old",
            severity="warn",
            message=message,
            value=None if np.isinf(value) else value,
            limit=limit,
            unit="h",
            time=doses.times[j],
        )
    ]
