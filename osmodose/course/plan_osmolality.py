"""Osmolality for a planned dose when the latest measured one predates doses given since.

A measured osmolality is a figure of the moment it was drawn.  Once doses
have moved sodium since (the projection), judging the old figure would
understate the osmolality now, and setting it against an osmolality
calculated from the projected sodium gives an artefactual (often negative)
gap.  The plan instead judges the larger of the osmolality calculated from the
projected sodium (the check does that) and the measured one carried forward
by 2 x the projected sodium change: sodium counts twice in 2 Na + glucose +
urea (McMaster Textbook of Internal Medicine), for its anion.  The gap is
then n/a, with a note saying why.  Mannitol given since the latest measured
osmolality is in neither figure (the calculated osmolality does not see it):
the plan warns to re-measure before another dose.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime

import numpy as np

from osmodose.check.results import CheckResult
from osmodose.check.rules import RULES_BY_CODE
from osmodose.course.judging import CourseFinding, past_limit, when
from osmodose.course.projection import Projection
from osmodose.course.timeline import SECONDS_PER_HOUR, Timeline, latest_measured_osmolality
from osmodose.formulary.model import Formulary, Limits

#: Each mmol/L of sodium counts twice in the calculated osmolality (2 Na + glucose + urea).
OSMOLES_PER_SODIUM = 2.0


@dataclass(frozen=True)
class Carried:
    """The latest measured osmolality carried forward through the sodium change since it was drawn."""

    measured: float
    sodium_change: float
    value: float
    lab_index: int
    """The lab it was measured at (the latest lab, or an older one within `lab_max_age`)."""
    age_h: float
    """How old it is at the planned time."""


def carried_osmolality(timeline: Timeline, projection: Projection, max_age_h: float | None) -> Carried | None:
    """The latest measured osmolality within `max_age_h`, carried to now; None while the latest lab's still holds.

    It still holds when it was measured at the latest lab and no sodium was
    projected since; a measured osmolality from an older lab (the latest lab
    had none) is carried through every sodium change since it was drawn,
    measured and projected: 2 x (sodium now - sodium then).
    """
    labs = timeline.labs
    t_at = projection.at.timestamp()
    index = latest_measured_osmolality(labs, t_at, max_age_h)
    if index is None and np.isfinite(labs.measured_osmolality[projection.lab_index]):
        index = projection.lab_index  # the latest lab's own, however old: carried as ever (labs-too-old warns)
    if index is None:
        return None
    change = projection.sodium_now - float(labs.sodium[index])
    if index == projection.lab_index and (not projection.moved or change == 0):
        return None
    measured = float(labs.measured_osmolality[index])
    return Carried(
        measured=measured,
        sodium_change=change,
        value=measured + OSMOLES_PER_SODIUM * change,
        lab_index=index,
        age_h=(t_at - float(labs.t[index])) / SECONDS_PER_HOUR,
    )


def osmolality_findings(
    timeline: Timeline,
    formulary: Formulary,
    check: CheckResult,
    projection: Projection,
    carried: Carried | None,
) -> tuple[list[CourseFinding], list[str]]:
    """The carried osmolality judged, the latest measured gap for a mannitol order, and mannitol since."""
    limits = formulary.limits
    at = projection.at
    found: list[CourseFinding] = []
    notes: list[str] = []
    calculated = check.calculated_osmolality_mosm_kg
    if carried is not None:
        drawn = timeline.labs.times[carried.lab_index]
        shown = "n/a" if calculated is None else f"{calculated:.1f}"
        notes.append(
            f"Osmolar gap n/a: the latest measured osmolality, {carried.measured:g} mOsm/kg at {when(drawn)} "
            f"({carried.age_h:.1f} h old), predates {_since(projection, carried)}, so it is not set against the "
            "osmolality calculated from the sodium now; osmolality is judged as the larger of the calculated "
            f"({shown}) and {carried.measured:g} + 2 x {carried.sodium_change:.1f} = {carried.value:.1f} mOsm/kg. "
            "Re-measure before dosing on it."
        )
        lowers = check.projected_sodium_rise_mmol_l is not None and check.projected_sodium_rise_mmol_l < 0
        if not lowers and (calculated is None or carried.value > calculated):
            found += _carried_high(carried, drawn, limits, at)
        found += _measured_gap(timeline, formulary, check, carried)
    else:
        notes += _too_old(timeline, formulary, projection)
    found += _mannitol_since_osmolality(timeline, projection)
    return found, notes


def _carried_high(carried: Carried, drawn: datetime, limits: Limits, at: datetime) -> list[CourseFinding]:
    """The carried osmolality against the osmolality ceilings (the limits of the check's `osmolality-high`)."""

    def words(severity: str, limit: float) -> str:
        return (
            f"osmolality now about {carried.value:.1f} mOsm/kg (measured {carried.measured:g} at "
            f"{when(drawn)}, {carried.age_h:.1f} h old, + 2 x {carried.sodium_change:.1f} sodium "
            f"change since) is above the {severity} limit of {limit:g} mOsm/kg"
        )

    ceilings = RULES_BY_CODE["osmolality-high"].named_limits(limits)
    return past_limit("projected-osmolality-high", carried.value, ceilings, "mOsm/kg", at, words)


def _too_old(timeline: Timeline, formulary: Formulary, projection: Projection) -> list[str]:
    """A measured osmolality older than `lab_max_age` is not judged: say so, with its age, when no newer one is."""
    labs = timeline.labs
    if np.isfinite(labs.measured_osmolality[projection.lab_index]):
        return []
    t_at = projection.at.timestamp()
    older = latest_measured_osmolality(labs, t_at)
    if older is None:
        return []
    age = (t_at - float(labs.t[older])) / SECONDS_PER_HOUR
    limit = formulary.limits.lab_max_age
    return [
        f"The latest measured osmolality, {labs.measured_osmolality[older]:g} mOsm/kg at {when(labs.times[older])}, "
        f"is {age:.1f} h old, older than the {limit:g} h limit: not judged; the calculated osmolality is. "
        "Re-measure before dosing on it."
    ]


def _since(projection: Projection, carried: Carried) -> str:
    """What happened since the measured osmolality: doses, a newer lab, or both."""
    n = len(projection.dose_rows)
    doses = f"the {n} dose{'s' if n > 1 else ''} since the latest lab" if n else ""
    outputs = "the urine output since the latest lab" if projection.moved and not n else ""
    newer = "the latest lab" if carried.lab_index != projection.lab_index else ""
    return " and ".join(x for x in (newer, doses, outputs) if x) or "the sodium now"


def _measured_gap(
    timeline: Timeline, formulary: Formulary, check: CheckResult, carried: Carried
) -> list[CourseFinding]:
    """For a mannitol order: the gap at the latest measured osmolality (the check has none to judge)."""
    dose = check.dose
    if dose is None or formulary.agent(dose.agent).solute != "mannitol":
        return []
    labs = timeline.labs
    index = carried.lab_index
    gap = float(labs.gap[index])
    drawn = labs.times[index]

    def words(severity: str, limit: float) -> str:
        return (
            f"osmolar gap {gap:.1f} mOsm/kg at the latest measured osmolality ({when(drawn)}, "
            f"{carried.age_h:.1f} h old) is above the {severity} limit of {limit:g} mOsm/kg"
        )

    gap_limits = RULES_BY_CODE["osmolar-gap-high"].named_limits(formulary.limits)
    return past_limit("osmolar-gap-high", gap, gap_limits, "mOsm/kg", drawn, words)


def _mannitol_since_osmolality(timeline: Timeline, projection: Projection) -> list[CourseFinding]:
    """Mannitol started since the latest measured osmolality (a dose at the lab's minute follows it)."""
    labs, doses = timeline.labs, timeline.doses
    t_at = projection.at.timestamp()
    measured = np.flatnonzero(np.isfinite(labs.measured_osmolality) & (labs.t <= t_at))
    t_from = float(labs.t[measured[-1]]) if len(measured) else -np.inf
    rows = np.flatnonzero(doses.agent.is_mannitol & (doses.t >= t_from) & (doses.t <= t_at))
    if not len(rows):
        return []
    last = int(rows[-1])
    since = (
        f"since the latest measured osmolality ({labs.measured_osmolality[measured[-1]]:g} mOsm/kg at "
        f"{when(labs.times[measured[-1]])})"
        if len(measured)
        else "and no osmolality has been measured"
    )
    n = len(rows)
    message = (
        f"{n} mannitol dose{'s' if n > 1 else ''} (the latest at {when(doses.times[last])}) given {since}: "
        "the osmolality and the osmolar gap do not show it; re-measure osmolality before another dose"
    )
    return [
        CourseFinding(
            code="osmolality-not-remeasured",
            severity="warn",
            message=message,
            value=None,
            limit=None,
            unit="mOsm/kg",
            time=doses.times[last],
        )
    ]
