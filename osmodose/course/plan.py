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

import math
from collections.abc import Mapping
from dataclasses import dataclass
from datetime import datetime
from typing import Literal

import numpy as np

from osmodose.case.fields import keys, read
from osmodose.case.inputs import CheckRequest, DoseRequest, parse_check_request
from osmodose.check.judging import high_risk, threshold, worst_status
from osmodose.check.patient_figures import budget_of
from osmodose.check.results import CheckResult, Finding
from osmodose.check.run import run_check
from osmodose.course.apparent_tbw import ApparentTbw, apparent_tbw, apparent_tbw_findings
from osmodose.course.entries import parse_time
from osmodose.course.episode import Episode, LabEntry
from osmodose.course.findings import CourseFinding, lab_age_h, mannitol_24h, projected_findings, when
from osmodose.course.judging import past_limit
from osmodose.course.multi_day import rise_used
from osmodose.course.plan_osmolality import carried_osmolality, osmolality_findings
from osmodose.course.projection import Projection, episode_tbw_l, project_now, tbw_method, tbw_notes
from osmodose.course.rescue import Rescue, overcorrection_rescue
from osmodose.course.timeline import (
    LOOKBACK_H,
    SECONDS_PER_HOUR,
    WINDOW_H,
    Timeline,
    build_timeline,
    latest_lab_at,
    lookback,
)
from osmodose.errors import InputError
from osmodose.formulary.model import Formulary, Limits
from osmodose.science import formulas as f

STALE_OSMOLALITY_NOTE = (
    "The check's osmolality figures use the latest lab's glucose and urea with the projected sodium; "
    "re-measure before dosing on them."
)
#: The order a plan checks: the same fields as `osmodose check`'s order.
ORDER_KEYS = keys("order")


@dataclass(frozen=True)
class Variant:
    """The planned dose worked with one total body water: the estimate, or the patient's apparent one."""

    basis: Literal["estimated", "apparent"]
    tbw_l: float
    projection: Projection
    check: CheckResult
    findings: list[CourseFinding]
    notes: list[str]

    @property
    def status(self) -> str:
        return worst_status(x.severity for x in (*self.check.findings, *self.findings))

    def rank(self) -> tuple[int, float]:
        """Worse status first, then the larger projected change: how the worse of two variants is chosen."""
        change = self.check.projected_sodium_rise_mmol_l
        return STATUS_RANK[self.status], abs(change) if change is not None else 0.0


STATUS_RANK = {"ok": 0, "warn": 1, "refuse": 2}


@dataclass(frozen=True)
class Plan:
    """The planned dose: the engine's check of it, and the course findings around it.

    `check`, `projection`, `findings` and `notes` are those of the variant the
    limits are judged on (`judged_on`): the worse of the plan with the
    estimated total body water and with the patient's apparent one.
    """

    at: datetime
    tbw_l: float
    lab: LabEntry
    projection: Projection
    check: CheckResult
    findings: list[CourseFinding]
    notes: list[str]
    variants: tuple[Variant, ...] = ()
    judged_on: str = "estimated"
    apparent: ApparentTbw | None = None
    rescue: Rescue | None = None

    @property
    def sodium_after(self) -> float | None:
        return self.check.projected_sodium_mmol_l

    @property
    def status(self) -> str:
        return worst_status(x.severity for x in (*self.check.findings, *self.findings))


APPARENT_NOTE = (
    "Judged on the worse of the two projections: with the estimated total body water ({estimated:.1f} L) and with "
    "the apparent one this patient's measured responses imply ({apparent:.1f} L, {share:.0f} % of the estimate)."
)
TARGET_APPARENT_NOTE = (
    "With the apparent total body water, the same change of {change:+g} mmol/L takes about {volume:.0f} mL "
    "instead of {estimated:.0f} mL."
)


def plan_dose(episode: Episode, formulary: Formulary, fields: Mapping[str, object]) -> Plan:
    """Check the order in `fields` (agent, volume or dose, duration, line, time) against the course."""
    at = parse_time(fields.get("time") or "now")
    timeline = build_timeline(episode, formulary)
    tbw_l = episode_tbw_l(episode, formulary)
    learned = apparent_tbw(timeline, tbw_l, formulary.limits)
    estimated = _variant(episode, formulary, fields, timeline, at, "estimated", tbw_l)
    variants = [estimated]
    notes: list[str] = []
    dose = estimated.check.dose
    if learned.combined_l is not None and estimated.check.projected_sodium_mmol_l is not None and dose is not None:
        request_dose = _same_volume(fields, dose.volume_ml, dose.duration_min)
        variants.append(
            _variant(episode, formulary, fields, timeline, at, "apparent", learned.combined_l, request_dose)
        )
        notes.append(
            APPARENT_NOTE.format(estimated=tbw_l, apparent=learned.combined_l, share=learned.share_percent or 0.0)
        )
        notes += _target_note(fields, formulary, variants[-1], dose.volume_ml)
    judged = max(variants, key=Variant.rank)
    findings = sorted(
        [*judged.findings, *apparent_tbw_findings(learned, timeline, formulary.limits)],
        key=lambda item: item.severity != "refuse",
    )
    smaller = min(tbw_l, learned.combined_l or tbw_l)
    rescue = overcorrection_rescue(timeline, estimated.projection, formulary.limits, formulary.agents, smaller)
    return Plan(
        at=at,
        tbw_l=judged.tbw_l,
        lab=episode.labs[judged.projection.lab_index],
        projection=judged.projection,
        check=judged.check,
        findings=findings,
        notes=judged.notes + notes,
        variants=tuple(variants),
        judged_on=judged.basis,
        apparent=learned,
        rescue=rescue,
    )


def _same_volume(fields: Mapping[str, object], volume_ml: float, duration_min: float | None) -> DoseRequest | None:
    """For a target change: the volume the estimate worked out, so both variants judge the same order."""
    if not fields.get("target-rise"):
        return None
    return DoseRequest(
        agent_id=str(fields.get("agent") or "").strip(),
        mode="volume",
        amount=volume_ml,
        unit="mL",
        duration_min=duration_min,
        text=f"{volume_ml:.1f} (for the target change with the estimated TBW)",
    )


def _target_note(fields: Mapping[str, object], formulary: Formulary, apparent: Variant, volume_ml: float) -> list[str]:
    """For a target change: the volume that reaches it with the apparent TBW."""
    if not fields.get("target-rise") or apparent.check.dose is None:
        return []
    change = read("target-rise", fields["target-rise"])
    agent = formulary.agent(apparent.check.dose.agent)
    litres = f.volume_for_sodium_change(apparent.projection.sodium_now, agent.cations_mmol_l, apparent.tbw_l, change)
    if math.isnan(litres):
        return []
    return [TARGET_APPARENT_NOTE.format(change=change, volume=litres * f.ML_PER_L, estimated=volume_ml)]


def _variant(
    episode: Episode,
    formulary: Formulary,
    fields: Mapping[str, object],
    timeline: Timeline,
    at: datetime,
    basis: Literal["estimated", "apparent"],
    tbw_l: float,
    dose: DoseRequest | None = None,
) -> Variant:
    """The order checked from the sodium projected now, with total body water `tbw_l`.

    The estimate is the engine's own (`episode_tbw_l`); the apparent one is
    handed to the check as an override, and `dose`, when given, replaces the
    order (a target change becomes the estimate's volume).
    """
    projection = project_now(episode, timeline, tbw_l, at)
    if projection is None:
        raise InputError("plan", None, f"needs a lab drawn at or before {when(at)}", "osmodose course add-lab FILE ...")
    lab = episode.labs[projection.lab_index]
    carried = carried_osmolality(timeline, projection, formulary.limits.lab_max_age)  # None: the lab's still holds
    raised_icp = icp_raised_within_24h(timeline, formulary.limits, at)
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
            "raised-icp": "yes" if raised_icp else fields.get("raised-icp"),
        }
    )
    if basis == "apparent":
        request = request.model_copy(update={"tbw_l": tbw_l, **({"dose": dose} if dose is not None else {})})
    check = with_course_context(run_check(request, formulary), timeline, formulary, projection, at)
    findings: list[CourseFinding] = []
    if check.projected_sodium_mmol_l is not None:
        findings += projected_findings(
            timeline,
            formulary.limits,
            projection,
            check.projected_sodium_mmol_l,
            projection.sodium_now,
            "projected sodium after this dose" + (" (apparent TBW)" if basis == "apparent" else ""),
        )
        judged_by_check = {"projected-sodium-high", *(x.code for x in check.findings)}
        findings = [x for x in findings if x.code not in judged_by_check]
    osmolality, osmolality_notes = osmolality_findings(timeline, formulary, check, projection, carried)
    findings += osmolality
    findings += _stale(timeline, formulary, at)
    findings += _mannitol(timeline, formulary, check, at, p.weight_kg)
    findings.sort(key=lambda item: item.severity != "refuse")
    notes = tbw_notes(episode, formulary) + projection.notes + osmolality_notes
    if projection.moved:
        notes.append(STALE_OSMOLALITY_NOTE)
    return Variant(basis=basis, tbw_l=tbw_l, projection=projection, check=check, findings=findings, notes=notes)


def check_with_course(request: CheckRequest, formulary: Formulary, episode: Episode, at: datetime) -> CheckResult:
    """`osmodose check --episode`: the typed case checked as at `at`, with the course open beside it.

    The typed sodium is taken as the sodium now.  As for a plan, ICP readings
    above the treatment threshold in the 24 h before mark raised intracranial
    pressure, the rise budget counts the rise already measured in the 24 h
    before, and the course's projected rise rules (24 h, 48 h, a later 24 h,
    from the lowest sodium measured) judge the order's projected sodium.
    """
    timeline = build_timeline(episode, formulary)
    if icp_raised_within_24h(timeline, formulary.limits, at):
        request = request.model_copy(update={"raised_icp": True})
    check = run_check(request, formulary)
    index = latest_lab_at(timeline.labs, at.timestamp())
    if index < 0:
        return check
    sodium = request.labs.sodium_mmol_l
    now = Projection(
        at=at,
        lab_index=index,
        lab_sodium=sodium,
        dose_rows=np.zeros(0, dtype=int),
        after_each=np.zeros(0),
        sodium_now=sodium,
    )
    check = with_course_context(check, timeline, formulary, now, at)
    after = check.projected_sodium_mmol_l
    if after is None:
        return check
    found = projected_findings(timeline, formulary.limits, now, after, sodium, "projected sodium after this order")
    judged = {"projected-sodium-high", *(x.code for x in check.findings)}
    extra = [Finding(**x.model_dump(exclude={"time"})) for x in found if x.code not in judged]
    findings = sorted([*check.findings, *extra], key=lambda item: item.severity != "refuse")
    return check.model_copy(update={"findings": findings, "status": worst_status(x.severity for x in findings)})


def icp_raised_within_24h(timeline: Timeline, limits: Limits, at: datetime) -> bool:
    """Whether an ICP reading in the 24 h up to `at` is above `icp_treat_above` (22 mmHg, Carney 2017).

    The check then treats the patient as having raised intracranial pressure
    (a hypotonic fluid is warned), as `--raised-icp` does.
    """
    readings, t_at = timeline.readings, at.timestamp()
    recent = (readings.t >= t_at - WINDOW_H * SECONDS_PER_HOUR) & (readings.t <= t_at)
    return bool(np.any(threshold(readings.icp[recent], limits.icp_treat_above, None)))


def with_course_context(
    check: CheckResult, timeline: Timeline, formulary: Formulary, projection: Projection, at: datetime
) -> CheckResult:
    """The check of a planned dose, seen with the course: the rise already used, and a gap mannitol explains.

    The rise budget counts the rise already measured in the 24 h before (from
    the lowest sodium in them) and takes the limits in force from the lowest
    sodium and the risk factors of the 48 h before, as the course's own rise
    rules do.  An osmolar gap after mannitol given in the course is judged by
    the course's gap rules, so the check's "no mannitol ordered" warning is
    left out.
    """
    labs, limits = timeline.labs, formulary.limits
    update: dict[str, object] = {}
    rise = check.projected_sodium_rise_mmol_l
    if rise is not None:
        used = rise_used(labs, at, projection.sodium_now)
        t_at = at.timestamp()
        back = lookback(
            labs.t, labs.sodium, labs.potassium, np.array([t_at - LOOKBACK_H * SECONDS_PER_HOUR]), np.array([t_at])
        )
        lowest = min(float(back.lowest_sodium[0]), projection.sodium_now)
        potassium = check.labs.get("potassium_mmol_l")
        at_risk = bool(back.high_risk[0]) or bool(
            high_risk(np.array([projection.sodium_now]), np.array([math.nan if potassium is None else potassium]))[0]
        )
        update["sodium_rise_budget"] = budget_of(rise, used.rise_mmol_l if used else None, lowest, at_risk, limits)
    doses = timeline.doses
    mannitol_before = np.any(doses.agent.is_mannitol & (doses.t < labs.t[projection.lab_index]))
    if mannitol_before:
        kept = [x for x in check.findings if x.code != "osmolar-gap-unexplained"]
        update |= {"findings": kept, "status": worst_status(x.severity for x in kept)}
    return check.model_copy(update=update)


def _stale(timeline: Timeline, formulary: Formulary, at: datetime) -> list[CourseFinding]:
    age = float(lab_age_h(timeline, np.asarray([at.timestamp()]))[0])

    def words(_severity: str, limit: float) -> str:
        drawn = timeline.labs.times[latest_lab_at(timeline.labs, at.timestamp())]
        return (
            f"the latest labs ({when(drawn)}) are {age:.1f} h old at {when(at)}, "
            f"older than the {limit:g} h limit: re-measure before dosing"
        )

    return past_limit("labs-too-old", age, (formulary.limits.lab_max_age, None), "h", at, words)


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
    since = when(datetime.fromtimestamp(t_at - WINDOW_H * SECONDS_PER_HOUR, at.tzinfo))
    return mannitol_24h(
        total, limit, f"24 h with this dose ({given:.0f} g given since {since} + {dose.solute_g:.0f} g)", at
    )
