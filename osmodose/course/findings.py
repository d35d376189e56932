"""Findings across a course of therapy, against the formulary's `[limits]`.

Each rule reads whole columns of the timeline and reports its worst instance
(the largest rise, the highest sodium, the lowest CPP), naming its time, with
how many entries crossed the limit.  Limits are judged as in a check: a
figure strictly above (or, for CPP, strictly below) the limit fires.  Every
default and its source is in `osmodose.formulary.limits`; ICP 22 mmHg and CPP
60 mmHg come from the Brain Trauma Foundation guidelines, 4th edition (Carney N
et al. Neurosurgery 2017;80:6-15).  A figure that cannot be computed (NaN)
never fires: its absence is shown as such.
"""

from __future__ import annotations

from datetime import datetime

import numpy as np

from osmodose.course.projection import Projection
from osmodose.course.timeline import SECONDS_PER_HOUR, WINDOW_H, Timeline, latest_lab_at, mannitol_between
from osmodose.formulary.model import Limits
from osmodose.results import Finding


class CourseFinding(Finding):
    """A finding with the time of the entry it is about."""

    time: datetime | None = None


def when(moment: datetime) -> str:
    """A time as shown everywhere: ISO 8601 to the minute, with its offset."""
    return moment.isoformat(timespec="minutes")


def _severity(value: float, warn: float | None, refuse: float | None) -> str | None:
    if np.isnan(value):
        return None
    if refuse is not None and value > refuse:
        return "refuse"
    if warn is not None and value > warn:
        return "warn"
    return None


def _count(values: np.ndarray, limit: float | None, above: bool = True) -> int:
    if limit is None:
        return 0
    with np.errstate(invalid="ignore"):
        return int(np.count_nonzero(values > limit if above else values < limit))


def _of(n: int, total: int, what: str) -> str:
    return f" ({n} of {total} {what} crossing a limit)" if total > 1 else ""


def course_findings(timeline: Timeline, limits: Limits, projection: Projection | None = None) -> list[CourseFinding]:
    """Every course finding, refusals first."""
    found = [
        *_sodium_window(timeline, limits),
        *_ceilings(timeline, limits),
        *_osmolar_gap(timeline, limits),
        *_mannitol_24h(timeline, limits),
        *_pressures(timeline, limits),
        *_stale_labs(timeline, limits),
    ]
    if projection is not None and len(projection.dose_rows):  # without doses since, the measured rules say it all
        found += projected_findings(timeline, limits, projection, projection.sodium_now, "projected sodium now")
    found.sort(key=lambda item: item.severity != "refuse")
    return found


def _sodium_window(timeline: Timeline, limits: Limits) -> list[CourseFinding]:
    labs = timeline.labs
    out: list[CourseFinding] = []
    if len(labs.t) < 2:
        return out
    window = labs.sodium_window
    for code, change, start_index, verb, warn, refuse in (
        (
            "sodium-rise-24h",
            window.rise,
            window.low_index,
            "rose",
            limits.get("sodium_rise_24h_warn"),
            limits.get("sodium_rise_24h_refuse"),
        ),
        ("sodium-fall-24h", window.fall, window.high_index, "fell", limits.get("sodium_fall_24h_warn"), None),
    ):
        j = int(np.argmax(change))
        value = float(change[j])
        severity = _severity(value, warn, refuse)
        if severity is None:
            continue
        limit = refuse if severity == "refuse" else warn
        i = int(start_index[j])
        crossed = _count(change, warn if warn is not None else refuse)
        message = (
            f"measured sodium {verb} {value:.1f} mmol/L within 24 h (from {labs.sodium[i]:.1f} at "
            f"{when(labs.times[i])} to {labs.sodium[j]:.1f} at {when(labs.times[j])}), above the {severity} "
            f"limit of {limit:g} mmol/L" + _of(crossed, len(labs.t), "labs")
        )
        out.append(
            CourseFinding(
                code=code,
                severity=severity,
                message=message,
                value=value,
                limit=limit,
                unit="mmol/L",
                time=labs.times[j],
            )
        )
    return out


def _ceilings(timeline: Timeline, limits: Limits) -> list[CourseFinding]:
    """The latest value against the ceilings (what the next dose starts from); an earlier peak only warns."""
    labs = timeline.labs
    out: list[CourseFinding] = []
    for code, what, unit, values, warn_key, refuse_key in (
        ("sodium-high", "measured sodium", "mmol/L", labs.sodium, "sodium_warn", "sodium_refuse"),
        ("osmolality-high", "osmolality", "mOsm/kg", labs.osmolality, "osmolality_warn", "osmolality_refuse"),
    ):
        known = np.flatnonzero(np.isfinite(values))
        if not len(known):
            continue
        warn, refuse = limits.get(warn_key), limits.get(refuse_key)

        def label(j: int, what: str = what, code: str = code) -> str:
            if code != "osmolality-high":
                return what
            return ("measured " if np.isfinite(labs.measured_osmolality[j]) else "calculated ") + what

        latest = int(known[-1])
        peak = int(known[np.argmax(values[known])])
        crossed = _of(_count(values, warn if warn is not None else refuse), len(labs.t), "labs")
        severity = _severity(float(values[latest]), warn, refuse)
        if severity is not None:
            limit = refuse if severity == "refuse" else warn
            message = (
                f"{label(latest)} {values[latest]:.1f} {unit} at {when(labs.times[latest])} (the latest) "
                f"is above the {severity} limit of {limit:g} {unit}" + crossed
            )
            name, found_at, value = code, latest, float(values[latest])
        else:
            severity = _severity(float(values[peak]), warn, refuse)
            if severity is None:
                continue
            limit = refuse if severity == "refuse" else warn
            message = (
                f"{label(peak)} {values[peak]:.1f} {unit} at {when(labs.times[peak])} was above the {severity} "
                f"limit of {limit:g} {unit}; the latest is {values[latest]:.1f} at {when(labs.times[latest])}"
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


def _osmolar_gap(timeline: Timeline, limits: Limits) -> list[CourseFinding]:
    """A gap growing across mannitol doses (mannitol accumulating), and a high gap after mannitol."""
    labs, doses = timeline.labs, timeline.doses
    out: list[CourseFinding] = []
    has_gap = np.flatnonzero(np.isfinite(labs.gap))
    if not len(has_gap) or not np.any(doses.agent.is_mannitol):
        return out
    t, gap = labs.t[has_gap], labs.gap[has_gap]
    rise_limit = limits.get("osmolar_gap_rise_warn")
    if rise_limit is not None and len(has_gap) > 1:
        across = mannitol_between(doses, t[None, :], t[:, None])  # row j later, column i earlier
        rise = np.where(across, gap[:, None] - gap[None, :], -np.inf)
        j, i = np.unravel_index(int(np.argmax(rise)), rise.shape)
        value = float(rise[j, i])
        if value > rise_limit:
            message = (
                f"osmolar gap rose {value:.1f} mOsm/kg across mannitol (from {gap[i]:.1f} at "
                f"{when(labs.times[has_gap[i]])} to {gap[j]:.1f} at {when(labs.times[has_gap[j]])}), above the "
                f"warn limit of {rise_limit:g} mOsm/kg: mannitol may be accumulating"
            )
            out.append(
                CourseFinding(
                    code="osmolar-gap-rising",
                    severity="warn",
                    message=message,
                    value=value,
                    limit=rise_limit,
                    unit="mOsm/kg",
                    time=labs.times[has_gap[j]],
                )
            )
    gap_limit = limits.get("osmolar_gap_warn")
    first_mannitol = float(np.min(doses.t[doses.agent.is_mannitol]))
    after = np.flatnonzero(t > first_mannitol)
    if gap_limit is not None and len(after):
        k = int(after[np.argmax(gap[after])])
        value = float(gap[k])
        if value > gap_limit:
            message = (
                f"osmolar gap {value:.1f} mOsm/kg at {when(labs.times[has_gap[k]])}, after mannitol, "
                f"is above the warn limit of {gap_limit:g} mOsm/kg"
            )
            out.append(
                CourseFinding(
                    code="osmolar-gap-high",
                    severity="warn",
                    message=message,
                    value=value,
                    limit=gap_limit,
                    unit="mOsm/kg",
                    time=labs.times[has_gap[k]],
                )
            )
    return out


def _mannitol_24h(timeline: Timeline, limits: Limits) -> list[CourseFinding]:
    doses = timeline.doses
    limit = limits.get("mannitol_24h_max")
    rows = np.flatnonzero(doses.agent.is_mannitol)
    if limit is None or not len(rows):
        return []
    j = int(rows[np.argmax(doses.mannitol_24h_g_per_kg[rows])])
    value = float(doses.mannitol_24h_g_per_kg[j])
    if not value > limit:
        return []
    message = (
        f"mannitol {value:.2f} g/kg within the 24 h up to the dose at {when(doses.times[j])} "
        f"is above the warn limit of {limit:g} g/kg"
    )
    return [
        CourseFinding(
            code="mannitol-24h",
            severity="warn",
            message=message,
            value=value,
            limit=limit,
            unit="g/kg",
            time=doses.times[j],
        )
    ]


def _pressures(timeline: Timeline, limits: Limits) -> list[CourseFinding]:
    r = timeline.readings
    out: list[CourseFinding] = []
    if not len(r.t):
        return out
    icp_limit = limits.get("icp_treat_above")
    if icp_limit is not None and float(np.max(r.icp)) > icp_limit:
        j = int(np.argmax(r.icp))
        message = (
            f"ICP {r.icp[j]:.0f} mmHg at {when(r.times[j])} is above the treatment threshold of {icp_limit:g} mmHg"
            + _of(_count(r.icp, icp_limit), len(r.t), "readings")
        )
        out.append(
            CourseFinding(
                code="icp-high",
                severity="warn",
                message=message,
                value=float(r.icp[j]),
                limit=icp_limit,
                unit="mmHg",
                time=r.times[j],
            )
        )
    cpp_limit = limits.get("cpp_target_min")
    if cpp_limit is not None and float(np.min(r.cpp)) < cpp_limit:
        j = int(np.argmin(r.cpp))
        message = (
            f"CPP {r.cpp[j]:.0f} mmHg (MAP {r.map[j]:.0f} - ICP {r.icp[j]:.0f}) at {when(r.times[j])} "
            f"is below the target of {cpp_limit:g} mmHg"
            + _of(_count(r.cpp, cpp_limit, above=False), len(r.t), "readings")
        )
        out.append(
            CourseFinding(
                code="cpp-low",
                severity="warn",
                message=message,
                value=float(r.cpp[j]),
                limit=cpp_limit,
                unit="mmHg",
                time=r.times[j],
            )
        )
    return out


def lab_age_h(timeline: Timeline, t: np.ndarray) -> np.ndarray:
    """Hours from the latest lab at or before each time to it; inf where no lab came before."""
    labs = timeline.labs
    index = np.searchsorted(labs.t, t, side="right") - 1
    drawn = np.where(index >= 0, labs.t[np.maximum(index, 0)] if len(labs.t) else 0.0, np.nan)
    return np.where(index >= 0, (t - drawn) / SECONDS_PER_HOUR, np.inf)


def _stale_labs(timeline: Timeline, limits: Limits) -> list[CourseFinding]:
    doses = timeline.doses
    limit = limits.get("lab_max_age")
    if limit is None or not len(doses.t):
        return []
    age = lab_age_h(timeline, doses.t)
    stale = np.flatnonzero(age > limit)
    if not len(stale):
        return []
    j = int(stale[np.argmax(age[stale])])
    value = float(age[j])
    basis = (
        "with no labs before it" if np.isinf(value) else f"on labs {value:.1f} h old, older than the {limit:g} h limit"
    )
    message = f"the dose of {doses.agent_ids[j]} at {when(doses.times[j])} was given {basis}" + _of(
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


def projected_findings(
    timeline: Timeline, limits: Limits, projection: Projection, sodium: float, what: str
) -> list[CourseFinding]:
    """A projected sodium against the ceilings, and its rise from the lowest sodium measured in the 24 h before."""
    out: list[CourseFinding] = []
    if np.isnan(sodium):
        return out
    labs = timeline.labs
    at = projection.at
    severity = _severity(sodium, limits.get("sodium_warn"), limits.get("sodium_refuse"))
    if severity is not None:
        limit = limits.get("sodium_refuse" if severity == "refuse" else "sodium_warn")
        message = f"{what} {sodium:.1f} mmol/L is above the {severity} limit of {limit:g} mmol/L"
        out.append(
            CourseFinding(
                code="projected-sodium-high",
                severity=severity,
                message=message,
                value=sodium,
                limit=limit,
                unit="mmol/L",
                time=at,
            )
        )
    t_at = at.timestamp()
    inside = np.flatnonzero((labs.t >= t_at - WINDOW_H * SECONDS_PER_HOUR) & (labs.t <= t_at))
    if not len(inside):
        inside = np.asarray([latest_lab_at(labs, t_at)])
    i = int(inside[np.argmin(labs.sodium[inside])])
    rise = sodium - float(labs.sodium[i])
    warn, refuse = limits.get("sodium_rise_24h_warn"), limits.get("sodium_rise_24h_refuse")
    severity = _severity(rise, warn, refuse)
    if severity is not None:
        limit = refuse if severity == "refuse" else warn
        message = (
            f"{what} {sodium:.1f} mmol/L is {rise:.1f} above the {labs.sodium[i]:.1f} measured at "
            f"{when(labs.times[i])}, above the {severity} limit of {limit:g} mmol/L in 24 h"
        )
        out.append(
            CourseFinding(
                code="projected-rise-24h",
                severity=severity,
                message=message,
                value=rise,
                limit=limit,
                unit="mmol/L",
                time=at,
            )
        )
    return out
