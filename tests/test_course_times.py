"""Plausible times: no entry from the future, before the episode's start or from long ago; one offset per display."""

from __future__ import annotations

import json
from datetime import timedelta, timezone
from pathlib import Path

import pytest

from osmodose.cli.main import main
from osmodose.course.store import load_episode, save_episode
from osmodose.course.times import display_offset, in_display_offset
from tests.conftest import COURSE_NOW
from tests.course_build import episode, lab


def course(*args: object) -> int:
    return main(["course", *[str(a) for a in args]])


@pytest.fixture
def ep_file(tmp_path: Path) -> Path:
    path = tmp_path / "ep.json"
    assert course("new", path, "--weight", "70", "--age", "45", "--sex", "male") == 0
    return path


# The course clock in the tests reads 2026-12-02T12:00+00:00 (conftest.COURSE_NOW).
RANGE = "(accepted: from 2026-11-02T12:00+00:00 to 2026-12-02T12:10+00:00)"


@pytest.mark.parametrize(
    ("time", "message"),
    [
        ("2062-12-01T08:00Z", f"time: 2062-12-01T08:00+00:00 is more than 10 minutes in the future {RANGE}"),
        ("9999-12-01T08:00Z", f"time: 9999-12-01T08:00+00:00 is more than 10 minutes in the future {RANGE}"),
        ("2026-12-02T12:11Z", f"time: 2026-12-02T12:11+00:00 is more than 10 minutes in the future {RANGE}"),
        ("0001-01-01T00:00Z", "time: 0001-01-01T00:00+00:00 is more than 30 days ago (--max-age allows older "
         f"entries) {RANGE}"),
        ("2025-12-01T08:00Z", "time: 2025-12-01T08:00+00:00 is more than 30 days ago (--max-age allows older "
         f"entries) {RANGE}"),
    ],
)  # fmt: skip
def test_an_implausible_time_is_an_input_error_naming_the_field(ep_file: Path, capsys, time: str, message: str) -> None:
    capsys.readouterr()
    before = ep_file.read_bytes()
    for command in (
        ("add-lab", "--sodium", "140"),
        ("add-dose", "--agent", "nacl-3", "--volume", "100"),
        ("add-reading", "--map", "80", "--icp", "20"),
    ):
        assert course(command[0], ep_file, "--time", time, *command[1:]) == 2
        assert capsys.readouterr().err == f"osmodose: {message}\n"
    assert ep_file.read_bytes() == before


def test_ten_minutes_ahead_is_still_accepted(ep_file: Path) -> None:
    # Clocks on a ward differ by a few minutes (common practice): up to 10 minutes ahead is not refused.
    assert course("add-lab", ep_file, "--time", "2026-12-02T12:10Z", "--sodium", "140") == 0


def test_max_age_lets_an_older_entry_in(ep_file: Path) -> None:
    assert course("add-lab", ep_file, "--time", "2026-10-01T08:00Z", "--sodium", "140", "--max-age", "90") == 0
    assert load_episode(ep_file).labs[0].sodium_mmol_l == 140.0


def test_an_entry_before_the_episodes_start_is_refused(tmp_path: Path, capsys) -> None:
    path = tmp_path / "ep.json"
    assert course("new", path, "--weight", "70", "--age", "45", "--sex", "male", "--start", "2026-12-01T06:00Z") == 0
    capsys.readouterr()
    assert course("add-lab", path, "--time", "2026-12-01T05:59Z", "--sodium", "140") == 2
    assert capsys.readouterr().err == (
        "osmodose: time: 2026-12-01T05:59+00:00 is before the episode's start (2026-12-01T06:00+00:00) "
        "(accepted: from 2026-12-01T06:00+00:00 to 2026-12-02T12:10+00:00)\n"
    )
    assert course("add-lab", path, "--time", "2026-12-01T06:00Z", "--sodium", "140") == 0


def test_an_implausible_start_is_refused(tmp_path: Path, capsys) -> None:
    path = tmp_path / "ep.json"
    assert course("new", path, "--weight", "70", "--age", "45", "--sex", "male", "--start", "2062-01-01T00:00Z") == 2
    assert capsys.readouterr().err.startswith("osmodose: start: 2062-01-01T00:00+00:00 is more than 10 minutes")
    assert not path.exists()


def test_the_app_form_checks_the_time_too(tmp_path: Path, demo) -> None:
    from osmodose.app.course_view import add_entry, open_course

    path = tmp_path / "ep.json"
    save_episode(episode(labs=[lab(0, 140)]), path, create=True)
    outcome = add_entry(open_course(path, demo), "lab", demo, {"time": "2062-12-01T08:00Z", "sodium": "141"})
    assert outcome.state is None and outcome.field == "time"
    assert str(outcome.error).startswith("time: 2062-12-01T08:00+00:00 is more than 10 minutes in the future")


def test_times_typed_in_different_offsets_are_shown_in_the_episodes_one(tmp_path: Path, capsys) -> None:
    path = tmp_path / "ep.json"
    course("new", path, "--weight", "70", "--age", "45", "--sex", "male", "--start", "2026-12-01T07:00+01:00")
    course("add-lab", path, "--time", "2026-12-01T08:00+01:00", "--sodium", "140")
    course("add-lab", path, "--time", "2026-12-01T08:30Z", "--sodium", "141")  # 09:30 at +01:00
    capsys.readouterr()
    course("show", path)
    out = capsys.readouterr().out
    assert "2026-12-01T08:00+01:00  L1  lab      Na 140.0\n" in out
    assert "2026-12-01T09:30+01:00  L2  lab      Na 141.0  24 h rise +1.0\n" in out
    assert "+00:00" not in out.split("\n\n")[1]  # the table: one offset
    course("show", path, "--json")
    shown = json.loads(capsys.readouterr().out)
    assert [x["time"] for x in shown["labs"]] == ["2026-12-01T08:00:00+01:00", "2026-12-01T09:30:00+01:00"]
    # the file keeps each time as it was written
    assert load_episode(path).labs[1].time.utcoffset() == timedelta(0)


def test_the_display_offset_is_the_start_s_else_the_earliest_entry_s() -> None:
    plus_two = timezone(timedelta(hours=2))
    early = lab(0, 140).model_copy(update={"time": lab(0, 140).time.astimezone(plus_two)})  # 10:00+02:00
    ep = episode(labs=[lab(5, 141), early])
    assert display_offset(ep) == plus_two
    assert [x.time.isoformat() for x in in_display_offset(ep).labs] == [
        "2026-12-01T10:00:00+02:00",
        "2026-12-01T15:00:00+02:00",
    ]
    started = ep.model_copy(update={"started": COURSE_NOW - timedelta(days=2)})
    assert display_offset(started) == COURSE_NOW.tzinfo
