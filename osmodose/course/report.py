"""A course reviewed (timeline, projection, findings), as text and as JSON.

`review` does the work once; `render_review_text` and `review_json` only lay
it out, so the table, the JSON and the app show the same figures.  The plan
of a next dose is laid out here too.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from osmodose.check.report import STATUS_MARK, STATUS_WORDS, render_text
from osmodose.check.results import CAUTION, FormularyRef
from osmodose.course.episode import DoseEntry, EntryBase, Episode, LabEntry, ReadingEntry
from osmodose.course.findings import CourseFinding, course_findings, when
from osmodose.course.plan import Plan
from osmodose.course.projection import ProjectedPath, Projection, episode_tbw_l, project_now, projected_path, tbw_notes
from osmodose.course.projection import tbw_method as method_of
from osmodose.course.timeline import Timeline, build_timeline
from osmodose.course.times import in_display_offset
from osmodose.formulary.model import Formulary

#: A review looks back over doses already given, so its words differ from a check's.
COURSE_STATUS_WORDS = {
    "ok": "OK: no limit crossed",
    "warn": "WARN: a soft limit is crossed; review",
    "refuse": "REFUSE: a hard limit is crossed; no further dose without review",
}


@dataclass(frozen=True)
class Review:
    """Everything `course show` reports about an episode."""

    episode: Episode
    formulary: Formulary
    tbw_l: float
    tbw_method: str
    timeline: Timeline
    path: ProjectedPath | None
    projection: Projection | None
    findings: list[CourseFinding]
    notes: list[str]

    @property
    def status(self) -> str:
        severities = [x.severity for x in self.findings]
        return "refuse" if "refuse" in severities else ("warn" if severities else "ok")


def review(episode: Episode, formulary: Formulary) -> Review:
    """Timeline, projection to the last entry, and findings of an episode, every time in the episode's offset."""
    episode = in_display_offset(episode)
    timeline = build_timeline(episode, formulary)
    tbw_l = episode_tbw_l(episode, formulary)
    entries = [e.time for e in (*episode.labs, *episode.doses, *episode.readings)]
    projection = project_now(episode, timeline, tbw_l, max(entries)) if episode.labs else None
    return Review(
        episode=episode,
        formulary=formulary,
        tbw_l=tbw_l,
        tbw_method=method_of(episode, formulary),
        timeline=timeline,
        path=projected_path(timeline, tbw_l) if episode.labs else None,
        projection=projection,
        findings=course_findings(timeline, formulary.limits, projection),
        notes=tbw_notes(episode, formulary) + (projection.notes if projection else []),
    )


def _num(value: float) -> float | None:
    return None if np.isnan(value) else float(value)


def _f(value: float, digits: int = 1) -> str:
    return "n/a" if np.isnan(value) else f"{value:.{digits}f}"


def corrections_text(entry: EntryBase) -> str:
    """How an entry was corrected, for the timeline: each amendment with the values it replaced, and a removal."""
    parts = []
    for c in entry.corrections:
        what = ", ".join(f"{key} was {_shown_value(value)}" for key, value in c.previous.items())
        parts.append(f"{c.action} by {c.initials} at {when(c.at)}" + (f" ({what})" if what else "") + f": {c.reason}")
    return "[" + "; ".join(parts) + "]" if parts else ""


def _shown_value(value: object) -> str:
    return "none" if value is None else (f"{value:g}" if isinstance(value, float) else str(value))


def _entry_text(entry: EntryBase) -> str:
    """A removed entry's values as stored (nothing is computed from it any more)."""
    if isinstance(entry, LabEntry):
        names = (("Na", entry.sodium_mmol_l), ("K", entry.potassium_mmol_l), ("glucose", entry.glucose_mmol_l),
                 ("urea", entry.urea_mmol_l), ("osm", entry.osmolality_mosm_kg))  # fmt: skip
        return "  ".join(f"{name} {value:g}" for name, value in names if value is not None)
    if isinstance(entry, DoseEntry):
        return f"{entry.agent_id} {entry.volume_ml:g} mL" + (
            f" over {entry.duration_min:g} min" if entry.duration_min else ""
        )
    if isinstance(entry, ReadingEntry):
        return f"MAP {entry.map_mmhg:g}  ICP {entry.icp_mmhg:g}"
    return ""


def timeline_rows(result: Review) -> list[tuple[str, str, str, str]]:
    """(time, entry, details, id) rows in time order, as the table and an app list show them.

    An amended entry's details end with its corrections; a removed entry is
    listed as removed, with its old values, and takes no part in any figure.
    """
    tl, ep = result.timeline, result.episode
    rows: list[tuple[float, int, str, str, str, str]] = []
    labs = tl.labs
    for j, lab in enumerate(ep.labs):
        text = f"Na {_f(labs.sodium[j])}"
        for name, value in (("K", labs.potassium[j]), ("glucose", labs.glucose[j]), ("urea", labs.urea[j])):
            if not np.isnan(value):
                text += f"  {name} {_f(value)}"
        if not np.isnan(labs.measured_osmolality[j]):
            text += f"  osm {_f(labs.measured_osmolality[j], 0)}"
        if not np.isnan(labs.calculated_osmolality[j]):
            text += f"  calc {_f(labs.calculated_osmolality[j])}"
        if not np.isnan(labs.gap[j]):
            text += f"  gap {_f(labs.gap[j])}"
        if j:  # the rise is shown whether or not the rise limits apply to it (see course.sodium_rules)
            rise = labs.sodium_window.rise[j]
            text += "  24 h rise " + ("n/a" if np.isnan(rise) else f"{rise:+.1f}")
        rows.append((float(labs.t[j]), 0, when(lab.time), lab.id or "", "lab", _marked(text, lab)))
    doses = tl.doses
    for j, dose in enumerate(ep.doses):
        text = f"{dose.agent_id} {dose.volume_ml:g} mL"
        if dose.duration_min:
            text += f" over {dose.duration_min:g} min"
        if doses.mannitol_g[j]:
            text += f"  ({doses.mannitol_g[j]:.0f} g; {doses.mannitol_24h_g_per_kg[j]:.2f} g/kg in 24 h)"
        if result.path is not None and not np.isnan(result.path.dose_sodium[j]):
            projected = result.path.dose_sodium[j]
            text += f"  -> projected Na {projected:.1f}" if doses.agent.projects_sodium[j] else "  (no projection)"
        rows.append((float(doses.t[j]), 1, when(dose.time), dose.id or "", "dose", _marked(text, dose)))
    r = tl.readings
    for j, reading in enumerate(ep.readings):
        text = f"MAP {r.map[j]:.0f}  ICP {r.icp[j]:.0f}  CPP {r.cpp[j]:.0f}"
        rows.append((float(r.t[j]), 2, when(reading.time), reading.id or "", "reading", _marked(text, reading)))
    for gone in ep.removed:
        entry = gone.entry
        text = f"REMOVED {corrections_text(entry)} was: {_entry_text(entry)}"
        rows.append((entry.time.timestamp(), 3, when(entry.time), entry.id or "", gone.kind, text))
    rows.sort(key=lambda row: (row[0], row[1]))
    return [(time, kind, text, entry_id) for _, _, time, entry_id, kind, text in rows]


def _marked(text: str, entry: EntryBase) -> str:
    return f"{text}  AMENDED {corrections_text(entry)}" if entry.corrections else text


def patient_line(result: Review) -> str:
    """The patient as `course show` and the app name them: label, weight, age, sex, body water."""
    p = result.episode.patient
    text = (f"{p.label}: " if p.label else "") + f"{p.weight_kg:g} kg, {p.age_years:g} y, {p.sex}"
    if p.height_cm is not None:
        text += f", {p.height_cm:g} cm"
    return f"patient: {text}; total body water {result.tbw_l:.1f} L ({result.tbw_method})"


def _formulary_line(formulary: Formulary) -> str:
    return f"formulary: {formulary.name} v{formulary.version} sha256 {formulary.sha256}"


def projection_line(projection: Projection | None, timeline: Timeline) -> str:
    """Where the projected sodium stands now, and from which lab, as `course show` and the app say it."""
    if projection is None:
        return "projected sodium: n/a (no labs)"
    n = len(projection.dose_rows)
    drawn = when(timeline.labs.times[projection.lab_index])
    if not n:
        return f"latest sodium: {projection.lab_sodium:.1f} mmol/L at {drawn} (no dose since)"
    return (
        f"projected sodium now: {projection.sodium_now:.1f} mmol/L "
        f"(from {projection.lab_sodium:.1f} at {drawn} through {n} dose{'s' if n > 1 else ''} since)"
    )


def _findings_lines(findings: list[CourseFinding], title: str = "course checks") -> list[str]:
    if not findings:
        return [f"{title}: none crossed"]
    return [f"{title}:"] + [f"  {STATUS_MARK[x.severity]} {x.code}: {x.message}" for x in findings]


def render_review_text(result: Review, path: Path | str) -> str:
    rows = timeline_rows(result)
    width = max([len(r[0]) for r in rows] + [4])
    id_width = max([len(r[3]) for r in rows] + [2])
    lines = [
        f"osmodose course  {STATUS_MARK[result.status]} {COURSE_STATUS_WORDS[result.status]}",
        f"episode: {path}",
        _formulary_line(result.formulary),
        patient_line(result),
        "",
        f"{'time':<{width}}  {'id':<{id_width}}  {'entry':<7}  details",
        *[f"{time:<{width}}  {entry_id:<{id_width}}  {kind:<7}  {text}" for time, kind, text, entry_id in rows],
    ]
    if not rows:
        lines.append("(no entries yet)")
    lines += ["", projection_line(result.projection, result.timeline), "", *_findings_lines(result.findings)]
    if result.notes:
        lines += ["notes:", *[f"  - {note}" for note in result.notes]]
    lines += ["", CAUTION]
    return "\n".join(lines) + "\n"


def _formulary_ref(formulary: Formulary) -> dict[str, Any]:
    ref = FormularyRef(name=formulary.name, version=formulary.version, sha256=formulary.sha256, path=formulary.path)
    return ref.model_dump(mode="json")


def _projection_json(projection: Projection | None, result_timeline: Timeline) -> dict[str, Any] | None:
    if projection is None:
        return None
    return {
        "at": when(projection.at),
        "from_lab_time": when(result_timeline.labs.times[projection.lab_index]),
        "from_sodium_mmol_l": projection.lab_sodium,
        "doses_since": len(projection.dose_rows),
        "sodium_mmol_l": projection.sodium_now,
        "notes": projection.notes,
    }


def review_json(result: Review, path: Path | str) -> dict[str, Any]:
    tl, ep = result.timeline, result.episode
    labs = [
        {
            **lab.model_dump(mode="json"),
            "calculated_osmolality_mosm_kg": _num(tl.labs.calculated_osmolality[j]),
            "osmolar_gap_mosm_kg": _num(tl.labs.gap[j]),
            "sodium_rise_24h_mmol_l": _num(tl.labs.sodium_window.rise[j]),
            "sodium_fall_24h_mmol_l": _num(tl.labs.sodium_window.fall[j]),
        }
        for j, lab in enumerate(ep.labs)
    ]
    doses = [
        {
            **dose.model_dump(mode="json"),
            "mannitol_g": float(tl.doses.mannitol_g[j]),
            "mannitol_24h_g_per_kg": float(tl.doses.mannitol_24h_g_per_kg[j]),
            "projected_sodium_after_mmol_l": (
                _num(result.path.dose_sodium[j])
                if result.path is not None and tl.doses.agent.projects_sodium[j]
                else None
            ),
        }
        for j, dose in enumerate(ep.doses)
    ]
    readings = [{**r.model_dump(mode="json"), "cpp_mmhg": r.cpp_mmhg} for r in ep.readings]
    removed = [r.model_dump(mode="json") for r in ep.removed]
    return {
        "status": result.status,
        "episode": str(path),
        "format_version": ep.format_version,
        "patient": {**ep.patient.model_dump(mode="json"), "total_body_water_l": result.tbw_l},
        "tbw_method": result.tbw_method,
        "formulary": _formulary_ref(result.formulary),
        "labs": labs,
        "doses": doses,
        "readings": readings,
        "removed": removed,
        "projection": _projection_json(result.projection, tl),
        "findings": [x.model_dump(mode="json") for x in result.findings],
        "notes": result.notes,
        "caution": CAUTION,
    }


def render_plan_text(plan: Plan, path: Path | str) -> str:
    lab = plan.lab
    lines = [
        f"osmodose course plan  {STATUS_MARK[plan.status]} {STATUS_WORDS[plan.status]}",
        f"episode: {path}",
        f"planned at: {when(plan.at.astimezone(lab.time.tzinfo))}",
        f"latest lab: sodium {lab.sodium_mmol_l:.1f} mmol/L at {when(lab.time)}",
    ]
    n = len(plan.projection.dose_rows)
    lines.append(
        f"projected sodium before this dose: {plan.projection.sodium_now:.1f} mmol/L "
        f"(through {n} dose{'' if n == 1 else 's'} since the latest lab)"
    )
    after = plan.sodium_after
    lines.append("projected sodium after this dose: " + ("n/a" if after is None else f"{after:.1f} mmol/L"))
    lines += ["", *_findings_lines(plan.findings)]
    if plan.notes:
        lines += ["notes:", *[f"  - {note}" for note in plan.notes]]
    lines += ["", "the planned dose, checked from the projected sodium:", ""]
    return "\n".join(lines) + "\n" + render_text(plan.check)


def plan_json(plan: Plan, path: Path | str) -> dict[str, Any]:
    return {
        "status": plan.status,
        "episode": str(path),
        "planned_at": when(plan.at.astimezone(plan.lab.time.tzinfo)),
        "latest_lab": plan.lab.model_dump(mode="json"),
        "doses_since_latest_lab": len(plan.projection.dose_rows),
        "projected_sodium_before_mmol_l": plan.projection.sodium_now,
        "projected_sodium_after_mmol_l": plan.sodium_after,
        "findings": [x.model_dump(mode="json") for x in plan.findings],
        "notes": plan.notes,
        "check": plan.check.to_json(),
        "caution": CAUTION,
    }
