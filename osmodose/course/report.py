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

from osmodose.case.fields import LAB_FIELDS
from osmodose.check.report import STATUS_WORDS, finding_line, formulary_lines, plain, render_text
from osmodose.check.results import CAUTION, FormularyRef
from osmodose.course.apparent_tbw import ApparentTbw, apparent_tbw, apparent_tbw_findings
from osmodose.course.episode import DoseEntry, EntryBase, Episode, LabEntry, OutputEntry, ReadingEntry
from osmodose.course.findings import CourseFinding, course_findings, when
from osmodose.course.icp_response import IcpResponse, icp_responses
from osmodose.course.marks import LEGEND, Cell, TimelineRow, mark, timeline_marks
from osmodose.course.plan import Plan
from osmodose.course.projection import ProjectedPath, Projection, episode_tbw_l, project_now, projected_path, tbw_notes
from osmodose.course.projection import tbw_method as method_of
from osmodose.course.report_response import (
    apparent_json,
    apparent_lines,
    dose_details,
    icp_json,
    icp_lines,
    output_rows,
    plan_json_extras,
    plan_projection_lines,
    rescue_lines,
)
from osmodose.course.timeline import Timeline, build_timeline
from osmodose.course.times import in_display_offset
from osmodose.formulary.model import Formulary
from osmodose.science import precision as p
from osmodose.science.precision import round_document

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
    apparent: ApparentTbw | None = None
    """The apparent total body water the measured responses imply (per interval between labs, and combined)."""
    icp: tuple[IcpResponse, ...] = ()
    """The ICP response of each dose with readings around it."""

    @property
    def status(self) -> str:
        severities = [x.severity for x in self.findings]
        return "refuse" if "refuse" in severities else ("warn" if severities else "ok")


def review(episode: Episode, formulary: Formulary) -> Review:
    """Timeline, projection to the last entry, and findings of an episode, every time in the episode's offset."""
    episode = in_display_offset(episode)
    timeline = build_timeline(episode, formulary)
    tbw_l = episode_tbw_l(episode, formulary)
    last = episode.last()
    projection = project_now(episode, timeline, tbw_l, last) if episode.labs and last is not None else None
    learned = apparent_tbw(timeline, tbw_l, formulary.limits)
    findings = course_findings(timeline, formulary.limits, projection)
    findings += apparent_tbw_findings(learned, timeline, formulary.limits)
    findings.sort(key=lambda item: item.severity != "refuse")
    return Review(
        episode=episode,
        formulary=formulary,
        tbw_l=tbw_l,
        tbw_method=method_of(episode, formulary),
        timeline=timeline,
        path=projected_path(timeline, tbw_l) if episode.labs else None,
        projection=projection,
        findings=findings,
        notes=tbw_notes(episode, formulary) + (projection.notes if projection else []),
        apparent=learned,
        icp=tuple(icp_responses(timeline, formulary.limits)),
    )


def _num(value: float) -> float | None:
    return None if np.isnan(value) else float(value)


def _f(name: str, value: float) -> str:
    return p.figure_text(name, value)


def timeline_table(result: Review) -> list[TimelineRow]:
    """The timeline in time order, each figure a cell with its mark: what the table prints and the app draws."""
    tl, ep = result.timeline, result.episode
    marks = timeline_marks(tl, result.formulary.limits)
    rows: list[tuple[float, int, TimelineRow]] = []
    labs = tl.labs
    for j, lab in enumerate(ep.labs):
        cells = [Cell("Na", _f("sodium_mmol_l", labs.sodium[j]), *mark(marks.sodium[j]))]
        for name, key, value in (
            ("K", "potassium_mmol_l", labs.potassium[j]),
            ("glucose", "glucose_mmol_l", labs.glucose[j]),
            ("urea", "urea_mmol_l", labs.urea[j]),
        ):
            if not np.isnan(value):
                cells.append(Cell(name, _f(key, value)))
        for name, key, values, marked in (
            ("osm", "osmolality_mosm_kg", labs.measured_osmolality, marks.osmolality),
            ("calc", "calculated_osmolality_mosm_kg", labs.calculated_osmolality, marks.calculated),
            ("gap", "osmolar_gap_mosm_kg", labs.gap, marks.gap),
        ):
            if not np.isnan(values[j]):
                cells.append(Cell(name, _f(key, values[j]), *mark(marked[j])))
        if j:  # the rise is shown whether or not the rise limits apply to it (see course.sodium_rules)
            rise = labs.sodium_window.rise[j]
            cells.append(Cell("24 h rise", p.signed_text("sodium_rise_24h_mmol_l", rise), *mark(marks.rise[j])))
            if marks.fall[j]:
                fall = labs.sodium_window.fall[j]
                cells.append(Cell("24 h fall", _f("sodium_fall_24h_mmol_l", fall), *mark(marks.fall[j])))
        rows.append((float(labs.t[j]), 0, _row(lab, "lab", cells)))
    doses = tl.doses
    icp = {response.dose_row: response for response in result.icp}
    for j, dose in enumerate(ep.doses):
        given = f"{plain(dose.volume_ml, p.FIGURE_DECIMALS['volume_ml'])} mL"
        if dose.duration_min:
            given += f" over {plain(dose.duration_min, p.FIGURE_DECIMALS['duration_min'])} min"
        cells = [Cell(dose.agent_id, given)]
        if doses.mannitol_g[j]:
            cells.append(Cell("", p.figure_text("mannitol_g", doses.mannitol_g[j], "g")))
            per_kg = p.figure_text("mannitol_24h_g_per_kg", doses.mannitol_24h_g_per_kg[j], "g/kg")
            cells.append(Cell("in 24 h", per_kg, *mark(marks.mannitol_24h[j])))
        if result.path is not None and not np.isnan(result.path.dose_sodium[j]):
            projected = result.path.dose_sodium[j]
            if doses.agent.projects_sodium[j]:
                cells.append(Cell("-> projected Na", _f("projected_sodium_after_mmol_l", projected)))
            else:
                cells.append(Cell("(no projection)", ""))
        details = dose_details(j, result.apparent, icp).strip()
        if details:
            cells.append(Cell("", details))
        rows.append((float(doses.t[j]), 1, _row(dose, "dose", cells)))
    r = tl.readings
    for j, reading in enumerate(ep.readings):
        cells = [
            Cell("MAP", _f("map_mmhg", r.map[j])),
            Cell("ICP", _f("icp_mmhg", r.icp[j]), *mark(marks.icp[j])),
            Cell("CPP", _f("cpp_mmhg", r.cpp[j]), *mark(marks.cpp[j], "below")),
        ]
        rows.append((float(r.t[j]), 2, _row(reading, "reading", cells)))
    for (t, _time, text), output in zip(output_rows(ep, tl), ep.outputs, strict=True):
        rows.append((t, 3, _row(output, "urine", [Cell("", text)])))
    for gone in ep.removed:
        entry = gone.entry
        cells = [Cell("REMOVED", f"{corrections_text(entry)} was: {_entry_text(entry)}")]
        rows.append((entry.time.timestamp(), 4, TimelineRow(when(entry.time), gone.kind, tuple(cells), entry.id or "")))
    rows.sort(key=lambda row: (row[0], row[1]))
    return [row for _, _, row in rows]


def _row(entry: EntryBase, kind: str, cells: list[Cell]) -> TimelineRow:
    """A timeline row of a live entry: its id, and its amendments when it has any."""
    return TimelineRow(when(entry.time), kind, tuple(cells), entry.id or "", corrections_text(entry))


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
        names = [(f.key, entry.value(f.key)) for f in LAB_FIELDS]
        return "  ".join(f"{name} {value:g}" for name, value in names if value is not None)
    if isinstance(entry, DoseEntry):
        return f"{entry.agent_id} {entry.volume_ml:g} mL" + (
            f" over {entry.duration_min:g} min" if entry.duration_min else ""
        )
    if isinstance(entry, ReadingEntry):
        return f"MAP {entry.map_mmhg:g}  ICP {entry.icp_mmhg:g}"
    if isinstance(entry, OutputEntry):
        return f"urine {entry.volume_ml:g} mL"
    return ""


def timeline_rows(result: Review) -> list[tuple[str, str, str, str]]:
    """(time, entry, details, id) rows in time order, as the table and an app list show them (marks in words).

    An amended entry's details end with its corrections; a removed entry is
    listed as removed, with its old values, and takes no part in any figure.
    """
    return [(row.time, row.kind, row.text, row.entry_id) for row in timeline_table(result)]


def patient_line(result: Review) -> str:
    """The patient as `course show` and the app name them: label, weight, age, sex, body water."""
    p = result.episode.patient
    text = (f"{p.label}: " if p.label else "") + f"{p.weight_kg:g} kg, {p.age_years:g} y, {p.sex}"
    if p.height_cm is not None:
        text += f", {p.height_cm:g} cm"
    return f"patient: {text}; total body water {result.tbw_l:.1f} L ({result.tbw_method})"


def _formulary_lines(formulary: Formulary) -> list[str]:
    return formulary_lines(FormularyRef.of(formulary))


def projection_line(projection: Projection | None, timeline: Timeline) -> str:
    """Where the projected sodium stands now, and from which lab, as `course show` and the app say it."""
    if projection is None:
        return "projected sodium: n/a (no labs)"
    n = len(projection.dose_rows)
    drawn = when(timeline.labs.times[projection.lab_index])
    if not projection.moved:
        return f"latest sodium: {projection.lab_sodium:.1f} mmol/L at {drawn} (no dose since)"
    through = [f"{n} dose{'s' if n > 1 else ''}"] if n else []
    if len(projection.losses.t):
        through.append(f"{projection.losses.volume_ml:.0f} mL of urine")
    return (
        f"projected sodium now: {projection.sodium_now:.1f} mmol/L "
        f"(from {projection.lab_sodium:.1f} at {drawn} through {' and '.join(through)} since)"
    )


def _findings_lines(findings: list[CourseFinding], title: str = "course checks") -> list[str]:
    if not findings:
        return [f"{title}: none crossed"]
    return [f"{title}:"] + [f"  {finding_line(x.severity, x.code, x.message)}" for x in findings]


def render_review_text(result: Review, path: Path | str) -> str:
    """What `course show` prints: status, files, patient, the marked timeline, projection, findings, caution."""
    table = timeline_table(result)
    rows = [(row.time, row.kind, row.text, row.entry_id) for row in table]
    width = max([len(r[0]) for r in rows] + [4])
    id_width = max([len(r[3]) for r in rows] + [2])
    lines = [
        f"osmodose course  {COURSE_STATUS_WORDS[result.status]}",
        f"episode: {path}",
        *_formulary_lines(result.formulary),
        patient_line(result),
        "",
        f"{'time':<{width}}  {'id':<{id_width}}  {'entry':<7}  details",
        *[f"{time:<{width}}  {entry_id:<{id_width}}  {kind:<7}  {text}" for time, kind, text, entry_id in rows],
    ]
    if not rows:
        lines.append("(no entries yet)")
    elif any(row.severity for row in table):
        lines.append(LEGEND)
    lines += ["", projection_line(result.projection, result.timeline)]
    lines += [*apparent_lines(result.apparent), *icp_lines(list(result.icp), result.timeline.doses.agent_ids)]
    lines += ["", *_findings_lines(result.findings)]
    if result.notes:
        lines += ["notes:", *[f"  - {note}" for note in result.notes]]
    lines += ["", CAUTION]
    return "\n".join(lines) + "\n"


def _formulary_ref(formulary: Formulary) -> dict[str, Any]:
    return FormularyRef.of(formulary).model_dump(mode="json")


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
    icp = {response.dose_row: response for response in result.icp}
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
            "apparent_tbw_l": result.apparent.for_dose(j) if result.apparent is not None else None,
            "icp_response": icp_json(icp.get(j)),
        }
        for j, dose in enumerate(ep.doses)
    ]
    outputs = [output.model_dump(mode="json") for output in ep.outputs]
    readings = [{**r.model_dump(mode="json"), "cpp_mmhg": r.cpp_mmhg} for r in ep.readings]
    removed = [r.model_dump(mode="json") for r in ep.removed]
    document: dict[str, Any] = {
        "status": result.status,
        "episode": str(path),
        "format_version": ep.format_version,
        "patient": {**ep.patient.model_dump(mode="json"), "total_body_water_l": result.tbw_l},
        "tbw_method": result.tbw_method,
        "formulary": _formulary_ref(result.formulary),
        "labs": labs,
        "doses": doses,
        "readings": readings,
        "outputs": outputs,
        "removed": removed,
        "projection": _projection_json(result.projection, tl),
        "apparent_tbw_l": result.apparent.combined_l if result.apparent is not None else None,
        "apparent_tbw": apparent_json(result.apparent, tl),
        "findings": [x.model_dump(mode="json") for x in result.findings],
        "notes": result.notes,
        "caution": CAUTION,
    }
    rounded: dict[str, Any] = round_document(document)
    return rounded


def render_plan_text(plan: Plan, path: Path | str) -> str:
    lab = plan.lab
    lines = [
        f"osmodose course plan  {STATUS_WORDS[plan.status]}",
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
    lines += plan_projection_lines(plan)
    rescue = rescue_lines(plan.rescue)
    lines += ["", *rescue] if rescue else []
    lines += ["", *_findings_lines(plan.findings)]
    if plan.notes:
        lines += ["notes:", *[f"  - {note}" for note in plan.notes]]
    lines += ["", "the planned dose, checked from the projected sodium:", ""]
    return "\n".join(lines) + "\n" + render_text(plan.check)


def plan_json(plan: Plan, path: Path | str) -> dict[str, Any]:
    document: dict[str, Any] = {
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
        **plan_json_extras(plan),
        "caution": CAUTION,
    }
    rounded: dict[str, Any] = round_document(document)
    return rounded
