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

from osmodose.app.view import SYMBOL, FieldSpec
from osmodose.course.entries import parse_dose, parse_lab, parse_reading
from osmodose.course.episode import DoseEntry, Episode, LabEntry, ReadingEntry
from osmodose.course.plan import plan_dose
from osmodose.course.report import (
    COURSE_STATUS_WORDS,
    Review,
    patient_line,
    projection_line,
    render_plan_text,
    review,
    timeline_rows,
)
from osmodose.course.series import CourseSeries, course_series
from osmodose.course.store import read_episode, save_episode
from osmodose.course.times import check_entry_time
from osmodose.errors import OsmodoseError
from osmodose.formulary.model import Formulary
from osmodose.safe_text import escape_controls

EntryKind = Literal["lab", "dose", "reading"]

TIME_HINT = "2026-12-01T08:30+00:00, or now"
_TIME = FieldSpec("time", "time", "lab", TIME_HINT)
LINE_CHOICES = (("central", "central"), ("peripheral", "peripheral"))

#: The fields of each entry form, with the same keys as the command line's options.
ENTRY_FIELDS: dict[EntryKind, tuple[FieldSpec, ...]] = {
    "lab": (
        _TIME,
        FieldSpec("sodium", "sodium", "lab", "mmol/L (required)"),
        FieldSpec("potassium", "potassium", "lab", "mmol/L"),
        FieldSpec("glucose", "glucose", "lab", "mmol/L or mg/dL"),
        FieldSpec("urea", "urea", "lab", "mmol/L"),
        FieldSpec("bun", "or BUN", "lab", "mg/dL"),
        FieldSpec("osmolality", "osmolality", "lab", "measured, mOsm/kg"),
    ),
    "dose": (
        FieldSpec("time", "start", "dose", TIME_HINT),
        FieldSpec("agent", "agent", "dose", blank="choose"),
        FieldSpec("volume", "volume", "dose", "mL, or 0.25 L"),
        FieldSpec("duration", "duration", "dose", "min, or 2 h"),
    ),
    "reading": (
        _TIME,
        FieldSpec("map", "MAP", "reading", "mmHg, or 12 kPa"),
        FieldSpec("icp", "ICP", "reading", "mmHg (CPP = MAP - ICP)"),
    ),
}
ENTRY_TITLES: dict[EntryKind, str] = {
    "lab": "add a lab (serum values drawn at one time)",
    "dose": "add a dose given (time = start of the infusion)",
    "reading": "add a bedside reading (CPP is computed, never typed)",
}
PLAN_FIELDS: tuple[FieldSpec, ...] = (
    FieldSpec("agent", "agent", "plan", blank="choose"),
    FieldSpec("volume", "volume", "plan", "mL, or 0.25 L"),
    FieldSpec("dose", "or dose", "plan", "1 g/kg, or 50 g"),
    FieldSpec("duration", "duration", "plan", "min, or 2 h"),
    FieldSpec("line", "line", "plan", choices=LINE_CHOICES, blank="not stated"),
    FieldSpec("time", "at", "plan", "blank = now; " + TIME_HINT),
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
    """(time, entry, details, id) rows of the timeline table."""


def open_course(path: Path | str, formulary: Formulary) -> CourseState:
    """Read and review an episode file; any OsmodoseError is what `osmodose course show` reports."""
    path = Path(path)
    episode, digest = read_episode(path)
    result = review(episode, formulary)
    return CourseState(
        path=path,
        episode=episode,
        sha256=digest,
        review=result,
        series=course_series(episode, formulary),
        rows=tuple(timeline_rows(result)),
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
    keys = {spec.key for spec in specs}
    field = getattr(error, "field", None)
    return FormOutcome(error=error, field=field if field in keys else None)


def parse_entry(
    kind: EntryKind, episode: Episode, formulary: Formulary, values: Mapping[str, str]
) -> LabEntry | DoseEntry | ReadingEntry:
    """Typed form text to an entry, by the command line's own parsers (InputError names the field)."""
    if kind == "lab":
        return parse_lab(episode, values)
    if kind == "dose":
        return parse_dose(formulary, values)
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
    if ep.removed:
        counts += f", {len(ep.removed)} removed"
    return escape_controls(f"episode: {state.path}  ({counts})\n{patient_line(state.review)}", keep_lines=True)


def finding_rows(state: CourseState) -> list[tuple[str, str]]:
    """(severity, line) per course finding with its symbol and word; one ok line when none."""
    findings = state.review.findings
    if not findings:
        return [("ok", f"{SYMBOL['ok']} OK: no limit crossed")]
    return [(x.severity, f"{SYMBOL[x.severity]} {x.severity.upper()} {x.code}: {x.message}") for x in findings]


def notes_lines(state: CourseState) -> list[str]:
    """The projection now, then the review's notes."""
    result = state.review
    return [projection_line(result.projection, result.timeline), *(f"- {note}" for note in result.notes)]
