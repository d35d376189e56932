"""What the next dose would do, given everything already measured and given.

The planned dose is checked by the engine (`check.run_check`) exactly as
`osmodose check` would check it, but from the sodium projected now (the
latest lab carried through the doses started since) instead of the measured
one.  The course adds what a single check cannot see: the rise from the
lowest sodium measured in the last 24 h, mannitol already given in 24 h, and
the age of the labs at the planned time.

Once sodium is projected through doses given since the latest lab, that lab's
measured osmolality predates them: it is not handed to the check as is (the
check would judge the old value and report a gap against an osmolality
calculated from the new sodium, an artefact).  The check gets no measured
osmolality, so it judges the osmolality calculated from the projected sodium
and shows no gap; the plan also judges the measured osmolality carried
forward by twice the projected sodium change (each mmol/L of sodium brings
its anion: 2 mOsm/kg, the factor in 2 Na + glucose + urea), so the larger of
the two is judged.  Mannitol given since the latest measured osmolality is
in neither figure: the plan warns to re-measure.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from datetime import datetime

import numpy as np

from osmodose.case.fields import keys
from osmodose.case.inputs import parse_check_request
from osmodose.check.judging import severity_of, worst_status
from osmodose.check.results import CheckResult
from osmodose.check.run import run_check
from osmodose.course.entries import parse_time
from osmodose.course.episode import Episode, LabEntry
from osmodose.course.findings import CourseFinding, lab_age_h, projected_findings, when
from osmodose.course.plan_osmolality import carried_osmolality, osmolality_findings
from osmodose.course.projection import Projection, episode_tbw_l, project_now, tbw_method, tbw_notes
from osmodose.course.timeline import SECONDS_PER_HOUR, WINDOW_H, Timeline, build_timeline, latest_lab_at
from osmodose.errors import InputError
from osmodose.formulary.model import Formulary

STALE_OSMOLALITY_NOTE = (
    "The check's osmolality figures use the latest lab's glucose and urea with the projected sodium; "
    "re-measure before dosing on them."
)
#: The order a plan checks: the same fields as `osmodose check`'s order.
ORDER_KEYS = keys("order")


@dataclass(frozen=True)
class Plan:
    """The planned dose: the engine's check of it, and the course findings around it."""

    at: datetime
    tbw_l: float
    lab: LabEntry
    projection: Projection
    check: CheckResult
    findings: list[CourseFinding]
    notes: list[str]

    @property
    def sodium_after(self) -> float | None:
        return self.check.projected_sodium_mmol_l

    @property
    def status(self) -> str:
        return worst_status(x.severity for x in (*self.check.findings, *self.findings))


def plan_dose(episode: Episode, formulary: Formulary, fields: Mapping[str, object]) -> Plan:
    """Check the order in `fields` (agent, volume or dose, duration, line, time) against the course."""
    at = parse_time(fields.get("time") or "now")
    timeline = build_timeline(episode, formulary)
    tbw_l = episode_tbw_l(episode, formulary)
    projection = project_now(episode, timeline, tbw_l, at)
    if projection is None:
        raise InputError("plan", None, f"needs a lab drawn at or before {when(at)}", "osmodose course add-lab FILE ...")
    lab = episode.labs[projection.lab_index]
    carried = carried_osmolality(timeline, projection, formulary.limits.lab_max_age)  # None: the lab's still holds
    p = episode.patient
    request = parse_check_request(
        {
            "weight": p.weight_kg,
            "age": p.age_years,
            "sex": p.sex,
            "height": p.height_cm,
            "tbw-method": tbw_method(episode, formulary),
            **lab.lab_values(),
            "sodium": projection.sodium_now,
            "osmolality": lab.osmolality_mosm_kg if carried is None else None,
            **{name: fields.get(name) for name in ORDER_KEYS},
        }
    )
    check = run_check(request, formulary)
    findings: list[CourseFinding] = []
    if check.projected_sodium_mmol_l is not None:
        findings += projected_findings(
            timeline,
            formulary.limits,
            projection,
            check.projected_sodium_mmol_l,
            projection.sodium_now,
            "projected sodium after this dose",
        )
        judged_by_check = {"projected-sodium-high", *(x.code for x in check.findings)}
        findings = [x for x in findings if x.code not in judged_by_check]
    osmolality, osmolality_notes = osmolality_findings(timeline, formulary, check, projection, carried)
    findings += osmolality
    findings += _stale(timeline, formulary, at)
    findings += _mannitol(timeline, formulary, check, at, p.weight_kg)
    findings.sort(key=lambda item: item.severity != "refuse")
    notes = tbw_notes(episode, formulary) + projection.notes + osmolality_notes
    if len(projection.dose_rows):
        notes.append(STALE_OSMOLALITY_NOTE)
    return Plan(at=at, tbw_l=tbw_l, lab=lab, projection=projection, check=check, findings=findings, notes=notes)


def _stale(timeline: Timeline, formulary: Formulary, at: datetime) -> list[CourseFinding]:
    limit = formulary.limits.lab_max_age
    age = float(lab_age_h(timeline, np.asarray([at.timestamp()]))[0])
    if severity_of(age, limit, None) is None:
        return []
    drawn = timeline.labs.times[latest_lab_at(timeline.labs, at.timestamp())]
    message = (
        f"the latest labs ({when(drawn)}) are {age:.1f} h old at {when(at)}, "
        f"older than the {limit:g} h limit: re-measure before dosing"
    )
    return [
        CourseFinding(code="labs-too-old", severity="warn", message=message, value=age, limit=limit, unit="h", time=at)
    ]


def _mannitol(
    timeline: Timeline, formulary: Formulary, check: CheckResult, at: datetime, weight_kg: float
) -> list[CourseFinding]:
    limit = formulary.limits.mannitol_24h_max
    dose = check.dose
    if limit is None or dose is None or formulary.agent(dose.agent).solute != "mannitol" or dose.solute_g is None:
        return []
    doses = timeline.doses
    t_at = at.timestamp()
    inside = (doses.t >= t_at - WINDOW_H * SECONDS_PER_HOUR) & (doses.t <= t_at)
    given = float(np.sum(doses.mannitol_g[inside]))
    total = (given + dose.solute_g) / weight_kg
    if severity_of(total, limit, None) is None:
        return []
    message = (
        f"mannitol {total:.2f} g/kg within 24 h with this dose ({given:.0f} g given since "
        f"{when(datetime.fromtimestamp(t_at - WINDOW_H * SECONDS_PER_HOUR, at.tzinfo))} + {dose.solute_g:.0f} g) "
        f"is above the warn limit of {limit:g} g/kg"
    )
    return [
        CourseFinding(
            code="mannitol-24h", severity="warn", message=message, value=total, limit=limit, unit="g/kg", time=at
        )
    ]
