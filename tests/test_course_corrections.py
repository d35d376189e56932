"""Corrections with a trail: `course amend` and `course remove` keep the old value, who, when and why."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from osmodose.cli.main import main
from osmodose.course.corrections import amend_entry, remove_entry
from osmodose.course.store import load_episode
from osmodose.errors import InputError
from tests.conftest import COURSE_NOW
from tests.course_build import dose, episode, lab, reading


def course(*args: object) -> int:
    return main(["course", *[str(a) for a in args]])


@pytest.fixture
def ep_file(tmp_path: Path, capsys) -> Path:
    """An invented episode: a lab with a slipped decimal point (14.2 for 142), a dose, a reading."""
    path = tmp_path / "ep.json"
    for args in (
        ("new", path, "--weight", "70", "--age", "45", "--sex", "male"),
        ("add-lab", path, "--time", "2026-12-01T08:00Z", "--sodium", "140", "--potassium", "4.0"),
        ("add-lab", path, "--time", "2026-12-01T14:00Z", "--sodium", "142", "--glucose", "6"),
        ("add-dose", path, "--time", "2026-12-01T09:00Z", "--agent", "nacl-3", "--volume", "150"),
        ("add-reading", path, "--time", "2026-12-01T10:00Z", "--map", "80", "--icp", "20"),
    ):
        assert course(*args) == 0
    capsys.readouterr()
    return path


def test_amend_keeps_the_old_value_who_when_and_why(ep_file: Path, capsys) -> None:
    code = course(
        "amend", ep_file, "L2", "--sodium", "145", "--reason", "lab phoned a corrected result", "--initials", "cd"
    )
    assert code == 0
    assert capsys.readouterr().out == f"amended lab L2 in {ep_file}; the old values are kept in it\n"
    lab2 = load_episode(ep_file).labs[1]
    assert (lab2.id, lab2.sodium_mmol_l, lab2.glucose_mmol_l) == ("L2", 145.0, 6.0)
    (correction,) = lab2.corrections
    assert correction.action == "amended" and correction.initials == "CD"
    assert correction.reason == "lab phoned a corrected result"
    assert correction.previous == {"sodium_mmol_l": 142.0}
    assert correction.at == COURSE_NOW


def test_the_timeline_marks_an_amended_entry(ep_file: Path, capsys) -> None:
    course("amend", ep_file, "L2", "--sodium", "145", "--reason", "lab phoned a corrected result", "--initials", "CD")
    capsys.readouterr()
    course("show", ep_file)
    out = capsys.readouterr().out
    assert (
        "2026-12-01T14:00+00:00  L2  lab      Na 145.0  glucose 6.0  24 h rise +5.0  AMENDED [amended by CD at "
        "2026-12-02T12:00+00:00 (sodium_mmol_l was 142): lab phoned a corrected result]\n"
    ) in out


def test_remove_moves_the_entry_out_of_every_figure_and_keeps_it(ep_file: Path, capsys) -> None:
    assert course("remove", ep_file, "d1", "--reason", "entered on the wrong patient", "--initials", "AB") == 0
    assert capsys.readouterr().out == f"removed dose D1 from the course in {ep_file}; it is kept there as removed\n"
    ep = load_episode(ep_file)
    assert ep.doses == ()
    (gone,) = ep.removed
    assert gone.kind == "dose" and gone.entry.id == "D1" and gone.entry.volume_ml == 150.0
    assert gone.entry.corrections[-1].action == "removed"
    course("show", ep_file, "--json")
    shown = json.loads(capsys.readouterr().out)
    assert shown["doses"] == [] and shown["removed"][0]["entry"]["id"] == "D1"
    course("show", ep_file)
    assert (
        "2026-12-01T09:00+00:00  D1  dose     REMOVED [removed by AB at 2026-12-02T12:00+00:00: entered on the wrong "
        "patient] was: nacl-3 150 mL\n"
    ) in capsys.readouterr().out


def test_a_removed_entry_cannot_be_amended_and_its_id_is_never_reused(ep_file: Path, capsys) -> None:
    course("remove", ep_file, "R1", "--reason", "probe was zeroed wrongly", "--initials", "AB")
    capsys.readouterr()
    assert course("amend", ep_file, "R1", "--icp", "12", "--reason", "zeroed again now", "--initials", "AB") == 2
    assert capsys.readouterr().err == (
        "osmodose: entry: R1 was removed from this episode; it cannot be changed "
        "(accepted: an entry id as course show lists it, e.g. L3, D1 or R2)\n"
    )
    course("add-reading", ep_file, "--time", "2026-12-01T11:00Z", "--map", "82", "--icp", "15")
    assert "added reading (CPP 67 mmHg) R2 at" in capsys.readouterr().out


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["L9", "--sodium", "140"], "entry: L9 is not an entry of this episode (accepted: an entry id as course show "
         "lists it, e.g. L3, D1 or R2)"),
        (["L1", "--map", "80"], "map: is not a field of a lab (accepted: time, sodium, potassium, glucose, urea, bun, "
         "ethanol, osmolality)"),
        (["L1"], "entry: L1 has nothing to amend: give the new values (accepted: time, sodium, potassium, glucose, "
         "urea, bun, ethanol, osmolality)"),
        (["L1", "--sodium", "140"], "entry: L1 is unchanged: the values given are the ones it has"),
        (["L1", "--sodium", "1400"], "sodium: 1400 is outside the plausible range"),
        (["L1", "--sodium", "none"], "sodium: is required"),
        (["L1", "--time", "2062-12-01T08:00Z"], "time: 2062-12-01T08:00+00:00 is more than 10 minutes in the future"),
    ],
)  # fmt: skip
def test_an_amendment_is_checked_like_a_new_entry(ep_file: Path, capsys, args: list[str], message: str) -> None:
    before = ep_file.read_bytes()
    code = course("amend", ep_file, *args, "--reason", "checked against the chart", "--initials", "AB")
    assert code == 2
    assert capsys.readouterr().err.startswith(f"osmodose: {message}")
    assert ep_file.read_bytes() == before


def test_a_reason_and_initials_are_required(ep_file: Path, capsys) -> None:
    assert course("remove", ep_file, "L1", "--reason", "typo", "--initials", "AB") == 2
    assert capsys.readouterr().err == (
        "osmodose: reason: typo is required: say why the entry is changed (accepted: 8 to 500 characters saying why)\n"
    )
    assert course("remove", ep_file, "L1", "--reason", "wrong patient entirely", "--initials", "A1") == 2
    assert "initials: A1 are not initials" in capsys.readouterr().err


def test_an_optional_value_can_be_cleared_and_a_dose_amended(demo, tmp_path: Path) -> None:
    ep = episode(
        labs=[lab(0, 140, potassium_mmol_l=3.1)], doses=[dose(1, "nacl-3", 150)], readings=[reading(2, 80, 20)]
    )
    cleared = amend_entry(ep, "L1", {"potassium": "none"}, "AB", "potassium belonged to another sample")
    assert cleared.labs[0].potassium_mmol_l is None
    assert cleared.labs[0].corrections[0].previous == {"potassium_mmol_l": 3.1}
    amended = amend_entry(cleared, "D1", {"volume": "250", "duration": "30"}, "AB", "pump log says 250 mL", demo)
    assert (amended.doses[0].volume_ml, amended.doses[0].duration_min) == (250.0, 30.0)
    assert amended.doses[0].corrections[0].previous == {"volume_ml": 150.0, "duration_min": None}
    assert amended.labs[0].corrections == cleared.labs[0].corrections  # other entries untouched


def test_an_amended_time_keeps_the_entries_in_time_order(demo) -> None:
    ep = episode(labs=[lab(0, 140), lab(4, 142)])
    moved = amend_entry(ep, "L1", {"time": "2026-12-01T13:00Z"}, "AB", "time of the draw, not of the result")
    assert [(x.id, x.sodium_mmol_l) for x in moved.labs] == [("L2", 142.0), ("L1", 140.0)]
    assert moved.labs[1].corrections[0].previous == {"time": "2026-12-01T08:00:00Z"}


def test_remove_in_the_core_refuses_an_unknown_id() -> None:
    with pytest.raises(InputError):
        remove_entry(episode(labs=[lab(0, 140)]), "D1", "AB", "never given at all")
