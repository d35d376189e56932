"""The course screen's plain logic (no terminal): typed entries to the file, the plan text and the plot panels."""

from __future__ import annotations

from pathlib import Path

import pytest

from osmodose.app.course_view import add_entry, finding_rows, open_course, plan_next, status_text
from osmodose.app.plot_view import pressure_panel, sodium_panel
from osmodose.course.entries import parse_reading
from osmodose.course.episode import Episode
from osmodose.course.plan import plan_dose
from osmodose.course.report import render_plan_text, review
from osmodose.course.series import course_series
from osmodose.course.store import CHANGED_MEANWHILE, read_episode, save_episode
from osmodose.errors import EpisodeFileError
from osmodose.formulary import Formulary
from tests.app.course_driving import NEXT_LAB, copy_demo, show_json


def test_open_course_has_one_row_per_entry_course_show_reports(
    tmp_path: Path, demo: Formulary, capsys: pytest.CaptureFixture[str]
) -> None:
    path = copy_demo(tmp_path)
    state = open_course(path, demo)
    shown = show_json(path, capsys)
    entries = len(shown["labs"]) + len(shown["doses"]) + len(shown["readings"]) + len(shown["outputs"])  # type: ignore[arg-type]
    assert len(state.rows) == entries == 17
    assert state.review.status == shown["status"] == "refuse"
    assert next(line for _, line in finding_rows(state)).startswith("✖ REFUSE osmolality-high: measured osmolality")
    assert status_text(state) == "✖ REFUSE: a hard limit is crossed; no further dose without review"


def test_a_typed_urine_output_is_saved_and_enters_the_timeline(tmp_path: Path, demo: Formulary) -> None:
    path = copy_demo(tmp_path)
    before = open_course(path, demo)
    values = {"time": "2026-12-01T23:00+00:00", "urine-volume": "600", "urine-sodium": "50", "over": "2h"}
    outcome = add_entry(before, "output", demo, values)
    assert outcome.error is None and outcome.state is not None
    assert len(outcome.state.episode.outputs) == len(before.episode.outputs) + 1
    assert outcome.state.rows[-1] == (
        "2026-12-01T23:00+00:00",
        "urine",
        "urine 600 mL over 2 h  Na 50  K n/a (taken as 0)",
        "U3",  # the demo has U1 and U2
    )


def test_a_typed_lab_is_saved_and_the_review_follows_the_file(tmp_path: Path, demo: Formulary) -> None:
    path = copy_demo(tmp_path)
    before = open_course(path, demo)
    outcome = add_entry(before, "lab", demo, NEXT_LAB)
    assert outcome.error is None and outcome.state is not None
    on_disk, digest = read_episode(path)
    assert len(on_disk.labs) == len(before.episode.labs) + 1
    assert on_disk.labs[-1].sodium_mmol_l == 147.0 and on_disk.labs[-1].osmolality_mosm_kg == 305.0
    assert outcome.state.sha256 == digest
    assert outcome.state.review.status == review(on_disk, demo).status == "warn"


@pytest.mark.parametrize(
    ("kind", "values", "field"),
    [
        ("lab", {**NEXT_LAB, "sodium": "14x"}, "sodium"),
        ("lab", {**NEXT_LAB, "time": "tomorrow"}, "time"),
        ("lab", {**NEXT_LAB, "bun": "14"}, "bun"),  # urea and BUN both typed
        ("dose", {"time": "now", "agent": "nacl-3", "volume": ""}, "volume"),
        ("dose", {"time": "now", "agent": "nacl-3", "volume": "150", "duration": "0"}, "duration"),
        ("reading", {"time": "now", "map": "80", "icp": "200"}, "icp"),
        ("output", {"time": "now", "urine-volume": "25L"}, "urine-volume"),
        ("output", {"time": "now", "urine-volume": "800", "urine-sodium": "600"}, "urine-sodium"),
    ],
)
def test_a_bad_value_names_its_field_and_nothing_is_written(
    tmp_path: Path, demo: Formulary, kind: str, values: dict[str, str], field: str
) -> None:
    path = copy_demo(tmp_path)
    raw = path.read_bytes()
    outcome = add_entry(open_course(path, demo), kind, demo, values)  # type: ignore[arg-type]
    assert outcome.state is None and outcome.field == field
    assert path.read_bytes() == raw


def test_an_entry_added_meanwhile_by_another_command_is_never_lost(tmp_path: Path, demo: Formulary) -> None:
    path = copy_demo(tmp_path)
    state = open_course(path, demo)
    other = state.episode.with_entry(parse_reading({"time": "2026-12-02T06:00+00:00", "map": "80", "icp": "15"}))
    save_episode(other, path)
    raw = path.read_bytes()
    outcome = add_entry(state, "lab", demo, NEXT_LAB)
    assert outcome.state is None and outcome.field is None
    assert isinstance(outcome.error, EpisodeFileError)
    assert str(outcome.error) == f"episode {path}: {CHANGED_MEANWHILE}"
    assert path.read_bytes() == raw


def test_plan_is_the_course_plan_report_and_leaves_the_file_alone(tmp_path: Path, demo: Formulary) -> None:
    path = copy_demo(tmp_path)
    raw = path.read_bytes()
    state = open_course(path, demo)
    order = {"agent": "nacl-3", "volume": "150", "duration": "20", "time": "2026-12-01T23:00+00:00"}
    outcome = plan_next(state, demo, order)
    assert outcome.text == render_plan_text(plan_dose(state.episode, demo, order), path)
    assert path.read_bytes() == raw
    assert plan_next(state, demo, {**order, "volume": "lots"}).field == "volume"


def test_plot_panels_draw_the_course_series_and_its_limits(tmp_path: Path, demo: Formulary) -> None:
    state = open_course(copy_demo(tmp_path), demo)
    series = course_series(state.episode, demo)
    assert state.series == series
    top = sodium_panel(series)
    measured = next(line for line in top.lines if line.label == "measured")
    assert (measured.hours, measured.values) == (series.lab_hours, series.sodium)
    assert [(x.hours, x.values) for x in top.lines if x.label == "projected"] == list(series.projected)
    assert top.dose_hours == series.dose_hours
    # Demo formulary limits: sodium warn 155, refuse 160; ICP above 22, CPP below 60 (Brain Trauma Foundation 4th ed.).
    assert {x.label: x.values[0] for x in top.lines if x.style == "limit"} == {
        "warn 155": 155.0,
        "refuse 160": 160.0,
    }
    bottom = pressure_panel(series)
    assert [(x.label, x.hours, x.values) for x in bottom.lines[2:]] == [
        ("ICP", series.reading_hours, series.icp),
        ("CPP", series.reading_hours, series.cpp),
    ]
    assert [x.label for x in bottom.lines[:2]] == ["ICP threshold 22", "CPP target 60"]  # drawn first, under the data
    assert top.x_range == bottom.x_range == (0.0, 14.0)  # 08:00 to 22:00, the demo's first and last entries


def test_an_episode_with_no_entries_has_empty_panels(tmp_path: Path, demo: Formulary) -> None:
    path = copy_demo(tmp_path)
    episode, _ = read_episode(path)
    save_episode(Episode(patient=episode.patient), path)
    state = open_course(path, demo)
    assert state.rows == () and state.review.status == "ok"
    assert sodium_panel(state.series).empty and pressure_panel(state.series).empty
