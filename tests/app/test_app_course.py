"""The course screen in the real app at 80x24, driven with the keyboard as a user would."""

from __future__ import annotations

from pathlib import Path

import pytest
from textual.pilot import Pilot
from textual.widgets import DataTable, Input, Static

from osmodose.app.app import OsmodoseApp
from osmodose.app.course_view import finding_rows, open_course
from osmodose.app.plot_view import pressure_panel, sodium_panel
from osmodose.app.screens.course import CourseScreen
from osmodose.app.screens.entry import EntryScreen
from osmodose.app.screens.main import MainScreen
from osmodose.app.widgets.course_plot import CoursePlot
from osmodose.cli.main import main
from osmodose.course.report import review
from osmodose.course.series import course_series
from osmodose.course.store import read_episode
from osmodose.formulary import Formulary
from tests.app.course_driving import NEXT_LAB, copy_demo, course_app, show_json
from tests.app.driving import Started, run_headless, sync

SIZE = (80, 24)
CORRUPT = '{"format_version": 2, "patient": {"weight_kg": 70,\n'


def course_screen(app: OsmodoseApp) -> CourseScreen:
    screen = app.screen
    assert isinstance(screen, CourseScreen)
    return screen


def shown(screen: CourseScreen, widget_id: str) -> str:
    return str(screen.query_one(widget_id, Static).render())


async def type_entry(pilot: Pilot, values: dict[str, str], typed: tuple[str, ...] = ()) -> EntryScreen:
    """Fill the open entry form field by field, Tab between fields, then ctrl+s.

    Fields in `typed` get each character as a key press; the others get their
    text at once (the same Changed message), which keeps the test fast.
    """
    await pilot.pause()  # the form is composed and its first box focused before anything is typed
    form = pilot.app.screen
    assert isinstance(form, EntryScreen)
    for spec in form.specs:
        assert pilot.app.focused is form.field(spec.key).control, f"Tab should have reached {spec.key}"
        text = values.get(spec.key, "")
        if spec.key in typed:
            await pilot.press(*text)
        else:
            form.field(spec.key).control.value = text  # type: ignore[union-attr]
        await pilot.press("tab")
    await pilot.press("ctrl+s")
    await pilot.pause()
    return form


@sync
async def test_f4_asks_for_a_file_reports_a_bad_one_inline_and_opens_a_good_one(
    tmp_path: Path, demo: Formulary, capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.chdir(tmp_path)
    copy_demo(tmp_path, "dr-pol.json")  # every letter a key of the course screen
    (tmp_path / "bad.json").write_text(CORRUPT, encoding="utf-8")
    assert main(["course", "show", "bad.json"]) == 2
    show_error = capsys.readouterr().err.removeprefix("osmodose: ").strip()
    app = course_app(demo)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.press("f4")
        screen = course_screen(app)
        assert not screen.query_one("#course-tabs").display
        screen.query_one("#course-path", Input).value = "bad.json"
        await pilot.press("enter")
        assert shown(screen, "#course-open-message") == f"✖ {show_error}"
        assert app.course is None
        await pilot.press("ctrl+u", *"dr-pol.json", "enter")  # d, r, p, o and l go into the box, not to the keys
        await pilot.pause()
        assert screen.query_one("#course-tabs").display and app.course is not None
        assert shown(screen, "#course-open-message") == ""
        await pilot.press("escape", "f4")  # back to the check, and the course reopens on the same file
        assert course_screen(app).state is app.course


@sync
async def test_course_screen_shows_the_timeline_and_findings_of_course_show(
    tmp_path: Path, demo: Formulary, capsys: pytest.CaptureFixture[str]
) -> None:
    path = copy_demo(tmp_path)
    report = show_json(path, capsys)
    app = course_app(demo, path)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        screen = course_screen(app)
        table = screen.query_one("#course-timeline", DataTable)
        entries = len(report["labs"]) + len(report["doses"]) + len(report["readings"]) + len(report["outputs"])  # type: ignore[arg-type]
        assert table.row_count == entries
        assert shown(screen, "#course-status") == "✖ REFUSE: a hard limit is crossed; no further dose without review"
        assert screen.query_one("#course-status").has_class("-refuse")
        findings = review(read_episode(path)[0], demo).findings
        assert [x["code"] for x in report["findings"]] == [x.code for x in findings]  # type: ignore[index, union-attr]
        lines = shown(screen, "#course-findings").splitlines()
        assert lines == [line for _, line in finding_rows(screen.state)]  # type: ignore[arg-type]
        assert [line.split(" ")[2].rstrip(":") for line in lines] == [x.code for x in findings]


@sync
async def test_a_lab_typed_in_the_form_is_saved_and_the_status_updates(tmp_path: Path, demo: Formulary) -> None:
    path = copy_demo(tmp_path)
    app = course_app(demo, path)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        screen = course_screen(app)
        rows = screen.query_one("#course-timeline", DataTable).row_count
        await pilot.press("l")
        await type_entry(pilot, NEXT_LAB, typed=("sodium",))
        assert app.screen is screen  # the form closed on a save
        on_disk = read_episode(path)[0]
        assert len(on_disk.labs) == 4 and on_disk.labs[-1].entered["sodium"] == "147"
        assert screen.query_one("#course-timeline", DataTable).row_count == rows + 1
        assert review(on_disk, demo).status == "warn"
        assert shown(screen, "#course-status") == "▲ WARN: a soft limit is crossed; review"
        assert screen.query_one("#course-status").has_class("-warn")
        assert screen.query_one("#sodium-plot", CoursePlot).series == course_series(on_disk, demo)


@sync
async def test_a_bad_value_is_marked_at_its_field_and_nothing_is_written(tmp_path: Path, demo: Formulary) -> None:
    path = copy_demo(tmp_path)
    raw = path.read_bytes()
    app = course_app(demo, path)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.press("r")
        form = await type_entry(pilot, {"time": "2026-12-02T08:00+00:00", "map": "80", "icp": "15 kg"}, ("icp",))
        assert app.screen is form  # still open, the error in place
        icp = form.field("icp")
        assert icp.has_class("-bad")
        assert icp.message.startswith("✖ ICP: 15 kg is in the wrong unit")  # named as its box is labelled
        assert not form.field("map").has_class("-bad")
        assert shown(form, "#entry-message") == "✖ nothing was saved: see the marked field"
        assert pilot.app.focused is icp.control
        await pilot.press("escape")
        assert app.screen is course_screen(app)
    assert path.read_bytes() == raw


@sync
async def test_the_plot_widgets_receive_the_course_series(tmp_path: Path, demo: Formulary) -> None:
    path = copy_demo(tmp_path)
    series = course_series(read_episode(path)[0], demo)
    app = course_app(demo, path)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.press("2")
        screen = course_screen(app)
        top = screen.query_one("#sodium-plot", CoursePlot)
        bottom = screen.query_one("#pressure-plot", CoursePlot)
        assert top.series == bottom.series == series
        assert top.panel == sodium_panel(series) and bottom.panel == pressure_panel(series)
        assert top.size.height > 0  # drawn on the plot tab


@sync
async def test_plan_shows_the_course_plan_report(tmp_path: Path, demo: Formulary) -> None:
    path = copy_demo(tmp_path)
    raw = path.read_bytes()
    app = course_app(demo, path)
    async with app.run_test(size=SIZE) as pilot:
        await pilot.press("p", "enter", *"nacl-3", "enter")  # the agent list, found by typing its name
        form = app.screen
        assert isinstance(form, EntryScreen) and form.field("agent").value == "nacl-3"
        form.field("volume").control.value = "150"  # type: ignore[union-attr]
        form.field("time").control.value = "2026-12-01T23:00+00:00"  # type: ignore[union-attr]
        await pilot.press("ctrl+s")
        text = shown(form, "#entry-text")
        assert text.startswith("osmodose course plan  REFUSE: ")
        assert "projected sodium before this dose: 151.2 mmol/L" in text
    assert path.read_bytes() == raw


def test_corrupt_episode_stops_launch_with_the_course_show_message(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch
) -> None:
    started: list[Started] = []
    monkeypatch.setattr(OsmodoseApp, "run", lambda self, *a, **k: run_headless(self, started))
    path = tmp_path / "bed3.json"
    path.write_text(CORRUPT, encoding="utf-8")
    assert main(["course", "show", str(path)]) == 2
    show_error = capsys.readouterr().err
    assert show_error == (
        f"osmodose: episode {path}: is not valid JSON at line 2, column 1 (Expecting property name enclosed in "
        "double quotes): half-written or corrupt; the file was not changed\n"
    )
    assert main(["--episode", str(path)]) == 2
    assert capsys.readouterr().err == show_error
    [(app, main_screen)] = started
    assert app.course is None and app.formulary is None  # no course screen, no figure: loading, then the end
    assert main_screen.outcome is None and main_screen.shown.state == "loading"
    assert path.read_text(encoding="utf-8") == CORRUPT


def test_good_episode_starts_the_app_on_it(
    tmp_path: Path, demo: Formulary, monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str]
) -> None:
    path = copy_demo(tmp_path)
    started: list[Started] = []
    monkeypatch.setattr(OsmodoseApp, "run", lambda self, *a, **k: run_headless(self, started))
    assert main(["--episode", str(path)]) == 0
    expected = open_course(path, demo)
    courses = [app.course for app, _ in started]
    assert [(x.path, x.sha256, x.episode, x.rows) for x in courses if x] == [
        (expected.path, expected.sha256, expected.episode, expected.rows)
    ]
    assert capsys.readouterr().err == ""


@sync
async def test_help_lists_the_course_keys_and_f4_returns_to_the_check(tmp_path: Path, demo: Formulary) -> None:
    app = course_app(demo, copy_demo(tmp_path))
    async with app.run_test(size=SIZE) as pilot:
        await pilot.press("f1")
        keys = [(key, text) for _, key, text in app.screen.keys]  # type: ignore[attr-defined]
        for pair in [("f4", "course"), ("l", "lab"), ("d", "dose"), ("r", "reading"), ("p", "plan"), ("2", "plot tab")]:
            assert pair in keys
        await pilot.press("escape", "f4")
        assert isinstance(app.screen, MainScreen)
