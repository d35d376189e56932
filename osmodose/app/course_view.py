"""What the course screen shows and does, as plain data: no textual here, so it is tested without a terminal.

An open episode is a `CourseState`: the file's path, the episode, the SHA-256
of the bytes it was read from (handed back on save, so an entry added
meanwhile by another command is never lost), its review, its plot series and
its timeline rows.  Typed entry forms go through the same parsers as `osmodose
course add-lab|add-dose|add-reading`; a save is always followed by a re-read,
so the screen shows what is on disk.  Nothing here computes a clinical figure.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Literal

from osmodose.app.form_view import SYMBOL, FieldSpec, shown_names, spec_of
from osmodose.case.fields import FIELDS as CASE_FIELDS
from osmodose.case.fields import LAB_KEYS
from osmodose.course.entries import OUTPUT_KEYS, parse_dose_entry, parse_lab, parse_output, parse_reading
from osmodose.course.episode import DoseEntry, Episode, LabEntry, OutputEntry, ReadingEntry
from osmodose.course.findings import when
from osmodose.course.marks import LEGEND, TimelineRow
from osmodose.course.plan import plan_dose
from osmodose.course.report import (
    COURSE_STATUS_WORDS,
    Review,
    patient_line,
    projection_line,
    render_plan_text,
    review,
    timeline_table,
)
from osmodose.course.report_response import apparent_lines, icp_lines
from osmodose.course.series import CourseSeries, course_series
from osmodose.course.store import read_episode, save_episode
from osmodose.course.times import check_entry_time
from osmodose.errors import InputError, OsmodoseError
from osmodose.formulary.model import Formulary
from osmodose.safe_text import escape_controls

EntryKind = Literal["lab", "dose", "reading", "output"]

TIME_HINT = CASE_FIELDS["time"].hint
_TIME = spec_of("time", "lab")

#: The fields of each entry form, with the same keys as the command line's options.
ENTRY_FIELDS: dict[EntryKind, tuple[FieldSpec, ...]] = {
    "lab": (_TIME, *(spec_of(key, "lab") for key in LAB_KEYS)),
    "dose": (
        spec_of("time", "dose", label="start"),
        spec_of("agent", "dose", blank="choose"),
        spec_of("volume", "dose"),
        spec_of("duration", "dose"),
    ),
    "reading": (
        _TIME,
        spec_of("map", "reading", hint="mmHg, or 12 kPa"),
        spec_of("icp", "reading", hint="mmHg (CPP = MAP - ICP)"),
    ),
    "output": (
        spec_of("time", "reading", label="end", hint="end of the collection; " + TIME_HINT),
        *(spec_of(key, "reading") for key in OUTPUT_KEYS if key != "time"),
    ),
}
ENTRY_TITLES: dict[EntryKind, str] = {
    "lab": "add a lab (serum values drawn at one time)",
    "dose": "add a dose given (time = start of the infusion)",
    "reading": "add a bedside reading (CPP is computed, never typed)",
    "output": "add a urine output (with its sodium it enters the balance)",
}
PLAN_FIELDS: tuple[FieldSpec, ...] = (
    spec_of("agent", "plan", blank="choose"),
    spec_of("volume", "plan"),
    spec_of("dose", "plan", label="or dose", hint="1 g/kg, or 50 g"),
    spec_of("target-rise", "plan", label="or Na change"),
    spec_of("target-sodium", "plan", label="or target Na"),
    spec_of("duration", "plan"),
    spec_of("line", "plan"),
    spec_of("time", "plan", label="at", hint="blank = now; " + TIME_HINT),
)


@dataclass(frozen=True)
class CourseState:
    """An episode as read from disk, reviewed under the app's formulary."""

    path: Path
    episode: Episode
    sha256: str
    review: Review
    series: CourseSeries
    rows: tuple[tuple[str, str, str, str], ...]
    """(time, entry, details, id) rows of the timeline table; a value past a limit carries its word (324.0 TOO HIGH)."""
    table: tuple[TimelineRow, ...] = ()
    """The same rows as cells, each with its mark and severity, for a screen that colours them too."""


def open_course(path: Path | str, formulary: Formulary) -> CourseState:
    """Read and review an episode file; any OsmodoseError is what `osmodose course show` reports."""
    path = Path(path)
    episode, digest = read_episode(path)
    result = review(episode, formulary)
    table = tuple(timeline_table(result))
    return CourseState(
        path=path,
        episode=episode,
        sha256=digest,
        review=result,
        series=course_series(episode, formulary),
        rows=tuple((row.time, row.kind, row.text, row.entry_id) for row in table),
        table=table,
    )


@dataclass(frozen=True)
class FormOutcome:
    """A form's result: the new state (or plan text), or the error and the field it marks."""

    state: CourseState | None = None
    text: str = ""
    error: OsmodoseError | None = None
    field: str | None = None
    """The form field to mark, when the error names one of the form's fields."""
    notes: tuple[str, ...] = ()
    """Worth saying, not errors (a stale temporary file removed by the save)."""


def _error(error: OsmodoseError, specs: tuple[FieldSpec, ...]) -> FormOutcome:
    """The error in the form's own words (its box labels), and the box it marks."""
    keys = {spec.key for spec in specs}
    field = getattr(error, "field", None)
    if isinstance(error, InputError):
        error = error.named(shown_names(specs))
    return FormOutcome(error=error, field=field if field in keys else None)


def parse_entry(
    kind: EntryKind, episode: Episode, formulary: Formulary, values: Mapping[str, str]
) -> LabEntry | DoseEntry | ReadingEntry | OutputEntry:
    """Typed form text to an entry, by the command line's own parsers (InputError names the field)."""
    if kind == "lab":
        return parse_lab(values)
    if kind == "dose":
        return parse_dose_entry(formulary, values)
    if kind == "output":
        return parse_output(values)
    return parse_reading(values)


def add_entry(state: CourseState, kind: EntryKind, formulary: Formulary, values: Mapping[str, str]) -> FormOutcome:
    """Parse, save (only if the file still holds what was read), re-read; nothing is written on any error."""
    specs = ENTRY_FIELDS[kind]
    notes: list[str] = []
    try:
        entry = parse_entry(kind, state.episode, formulary, values)
        check_entry_time(state.episode, entry.time)
        save_episode(state.episode.with_entry(entry), state.path, expect_sha256=state.sha256, note=notes.append)
        return FormOutcome(state=open_course(state.path, formulary), notes=tuple(notes))
    except OsmodoseError as error:
        return _error(error, specs)


def plan_next(state: CourseState, formulary: Formulary, values: Mapping[str, str]) -> FormOutcome:
    """The `osmodose course plan` report for the typed order; the file is not touched."""
    try:
        plan = plan_dose(state.episode, formulary, values)
    except OsmodoseError as error:
        return _error(error, PLAN_FIELDS)
    return FormOutcome(text=render_plan_text(plan, state.path))


def status_text(state: CourseState) -> str:
    """The course status line: symbol and words, as `course show` heads its report."""
    status = state.review.status
    return f"{SYMBOL[status]} {COURSE_STATUS_WORDS[status]}"


def head_text(state: CourseState) -> str:
    """Which file, how many entries, and the patient line of `course show`."""
    ep = state.episode
    counts = f"{len(ep.labs)} labs, {len(ep.doses)} doses, {len(ep.readings)} readings"
    if ep.outputs:
        counts += f", {len(ep.outputs)} urine outputs"
    if ep.removed:
        counts += f", {len(ep.removed)} removed"
    return escape_controls(f"episode: {state.path}  ({counts})\n{patient_line(state.review)}", keep_lines=True)


def legend_text(state: CourseState) -> str:
    """What the marks in the timeline mean, when any cell is marked (else nothing)."""
    return LEGEND if any(row.severity for row in state.table) else ""


def finding_rows(state: CourseState) -> list[tuple[str, str]]:
    """(severity, line) per course finding with its symbol and word; one ok line when none."""
    findings = state.review.findings
    if not findings:
        return [("ok", f"{SYMBOL['ok']} OK: no limit crossed")]
    return [(x.severity, f"{SYMBOL[x.severity]} {x.severity.upper()} {x.code}: {x.message}") for x in findings]


def row_marks(state: CourseState) -> list[tuple[str, str]]:
    """(severity, words) per timeline row: the course findings about that entry's time, by word and code.

    The core judges (`course.findings`); this only puts each finding beside
    the row of the entry it is about, so a value past a limit reads as such
    in the timeline itself ("✖ REFUSE osmolality-high"), not only in the
    findings tab.  ("", "") for a row nothing is found about.
    """
    by_row: dict[tuple[str, bool], list[tuple[str, str]]] = {}
    for finding in state.review.findings:
        if finding.time is not None:  # a pressure (mmHg) is a reading's; anything else a lab's or a dose's
            key = (when(finding.time), finding.unit == "mmHg")
            by_row.setdefault(key, []).append((finding.severity, finding.code))
    marks = []
    for time, kind, _, _ in state.rows:
        found = by_row.pop((time, kind == "reading"), [])  # the first row of that time and kind takes it
        worst = "refuse" if any(sev == "refuse" for sev, _ in found) else ("warn" if found else "")
        marks.append((worst, "  ".join(f"{SYMBOL[sev]} {sev.upper()} {code}" for sev, code in found)))
    return marks


def notes_lines(state: CourseState) -> list[str]:
    """The projection now, then the review's notes."""
    result = state.review
    return [
        projection_line(result.projection, result.timeline),
        *apparent_lines(result.apparent),
        *icp_lines(list(result.icp), result.timeline.doses.agent_ids),
        *(f"- {note}" for note in result.notes),
    ]
