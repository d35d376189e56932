"""The episode file: format, migration of old files, and never losing a file."""

from __future__ import annotations

import json
import os
import shutil
from datetime import UTC, datetime
from pathlib import Path

import pytest

from osmodose.cli.main import main
from osmodose.course.episode import FORMAT_VERSION, Episode
from osmodose.course.store import load_episode, save_episode
from osmodose.errors import EpisodeFileError
from tests.conftest import REPO_ROOT
from tests.course_build import dose, episode, lab, reading

V1_EXAMPLE = REPO_ROOT / "examples" / "episode-v1.json"
DEMO_EPISODE = REPO_ROOT / "examples" / "demo-episode.json"


def _message(path: Path) -> str:
    with pytest.raises(EpisodeFileError) as caught:
        load_episode(path)
    return str(caught.value)


def test_an_episode_survives_a_save_and_a_load(tmp_path: Path) -> None:
    ep = episode(
        labs=[lab(0, 130, glucose_mmol_l=6)], doses=[dose(1, "nacl-3", 150, 20)], readings=[reading(2, 80, 20)]
    )
    path = tmp_path / "ep.json"
    save_episode(ep, path, create=True)
    assert load_episode(path) == ep
    data = json.loads(path.read_text(encoding="utf-8"))
    assert data["format_version"] == FORMAT_VERSION == 5
    assert "cpp_mmhg" not in data["readings"][0]  # computed, never stored
    assert [data["labs"][0]["id"], data["doses"][0]["id"], data["readings"][0]["id"]] == ["L1", "D1", "R1"]


def test_entries_are_kept_in_time_order(tmp_path: Path) -> None:
    ep = episode(labs=[lab(5, 131), lab(0, 130)]).with_entry(lab(2, 133).model_copy())
    assert [x.sodium_mmol_l for x in ep.labs] == [130, 133, 131]


def test_the_shipped_version_1_file_loads_through_the_migration() -> None:
    ep = load_episode(V1_EXAMPLE)
    assert ep.format_version == 5
    # Version 1 wrote UTC without an offset: 22:00 is 22:00 UTC.
    assert ep.labs[0].time == datetime(2026, 11, 30, 22, 0, tzinfo=UTC)
    assert ep.labs[0].sodium_mmol_l == 121.0
    assert ep.labs[0].osmolality_mosm_kg == 262.0
    assert ep.labs[1].potassium_mmol_l is None  # absent stays absent
    assert ep.doses[0].agent_id == "nacl-3"
    assert ep.readings == ()
    assert ep.patient.height_cm == 168.0


def test_a_version_1_file_is_rewritten_in_the_current_format_when_a_command_changes_it(tmp_path: Path) -> None:
    path = tmp_path / "old.json"
    shutil.copy(V1_EXAMPLE, path)
    assert (
        main(["course", "add-reading", str(path), "--time", "2026-12-01T05:00+00:00", "--map", "80", "--icp", "18"])
        == 0
    )
    data = json.loads(path.read_text(encoding="utf-8"))
    assert data["format_version"] == 5
    assert data["labs"][0]["time"] == "2026-11-30T22:00:00Z"
    assert [x["id"] for x in data["labs"]] == ["L1", "L2"]
    assert [x["id"] for x in data["readings"]] == ["R1"]
    assert data["outputs"] == []


def test_a_version_3_file_loads_with_no_urine_outputs(tmp_path: Path) -> None:
    # Version 3 (before urine outputs and entry ids) had labs, doses and readings only: nothing moves, outputs
    # start empty, and each entry is given the id of its place.
    path = tmp_path / "v3.json"
    data = json.loads(episode(labs=[lab(0, 130)], doses=[dose(1, "nacl-3", 150, 20)]).to_json_text())
    del data["outputs"]
    for entry in [*data["labs"], *data["doses"]]:
        del entry["id"]
    path.write_text(json.dumps({**data, "format_version": 3}), encoding="utf-8")
    ep = load_episode(path)
    assert (ep.format_version, ep.outputs, ep.labs[0].sodium_mmol_l, ep.doses[0].volume_ml) == (5, (), 130.0, 150.0)
    assert (ep.labs[0].id, ep.doses[0].id) == ("L1", "D1")


def test_a_version_2_file_loads_unchanged_in_the_current_version(tmp_path: Path) -> None:
    # Versions 3 to 5 only add keys (the FHIR source of an imported entry; urine outputs; entry ids given in
    # order): nothing moves.
    path = tmp_path / "v2.json"
    data = json.loads(DEMO_EPISODE.read_text(encoding="utf-8"))
    del data["outputs"]
    for kind in ("labs", "doses", "readings"):
        for entry in data[kind]:
            del entry["id"]
    path.write_text(json.dumps({**data, "format_version": 2}), encoding="utf-8")
    assert load_episode(path) == load_episode(DEMO_EPISODE).model_copy(update={"outputs": ()})


def test_the_demo_episode_is_in_the_current_format() -> None:
    assert json.loads(DEMO_EPISODE.read_text(encoding="utf-8"))["format_version"] == FORMAT_VERSION
    assert load_episode(DEMO_EPISODE).patient.label == "Bed 3, demo patient (invented)"


@pytest.mark.parametrize(
    ("text", "problem"),
    [
        ("", "is empty (half-written?); the file was not changed"),
        (
            '{"format_version": 2, "patient": {"weight_kg": 70',  # cut off after 49 characters
            "is not valid JSON at line 1, column 50 (Expecting ',' delimiter): half-written or corrupt; "
            "the file was not changed",
        ),
        ("[1, 2]", "is not an episode: the top level is not a JSON object; the file was not changed"),
        ('{"patient": {}}', "has no format_version: not an osmodose episode file; the file was not changed"),
        ('{"format_version": "2"}', "format_version '2' is not a whole number; the file was not changed"),
        (
            '{"format_version": 6}',
            "format_version 6 is newer than this osmodose reads (up to 5): use a newer osmodose; "
            "the file was not changed",
        ),
        ('{"format_version": 0}', "format_version 0 is not one osmodose knows; the file was not changed"),
        (
            '{"format_version": 2, "patient": {"weight_kg": 70, "age_years": 45, "sex": "male"}, '
            '"labs": [{"time": "2026-12-01T08:00+00:00", "sodium_mmol_l": 1400}]}',
            "labs[1].sodium_mmol_l: 1400 is outside the plausible range (90 to 200 mmol/L); the file was not changed",
        ),
        (
            '{"format_version": 2, "patient": {"weight_kg": 70, "age_years": 45, "sex": "male"}, '
            '"labs": [{"time": "2026-12-01T08:00", "sodium_mmol_l": 140}]}',
            'labs[1].time: "2026-12-01T08:00" is not a time with its UTC offset (accepted: ISO 8601, e.g. '
            '"2026-12-01T08:30:00+00:00"); the file was not changed',
        ),
        (
            '{"format_version": 2, "patient": {"weight_kg": 70, "age_years": 45, "sex": "male", "wieght": 7}}',
            "patient.wieght: is not a key osmodose knows here (a misspelt key would lose its value); "
            "the file was not changed",
        ),
    ],
)
def test_a_bad_episode_file_gives_one_clear_error_naming_the_file(tmp_path: Path, text: str, problem: str) -> None:
    path = tmp_path / "bad.json"
    path.write_text(text, encoding="utf-8")
    assert _message(path) == f"episode {path}: {problem}"


def test_a_missing_file_is_named() -> None:
    assert (
        _message(Path("/nonexistent/ep.json"))
        == "episode /nonexistent/ep.json: cannot be read: No such file or directory"
    )


@pytest.mark.parametrize(
    "command",
    [
        ["add-lab", "--time", "2026-12-01T08:00Z", "--sodium", "130"],
        ["add-dose", "--time", "2026-12-01T08:00Z", "--agent", "nacl-3", "--volume", "100"],
        ["add-reading", "--time", "2026-12-01T08:00Z", "--map", "80", "--icp", "20"],
    ],
)
def test_a_half_written_file_is_never_overwritten(tmp_path: Path, capsys, command: list[str]) -> None:
    path = tmp_path / "ep.json"
    save_episode(episode(labs=[lab(0, 130)]), path, create=True)
    half = path.read_bytes()[:-40]
    path.write_bytes(half)
    code = main(["course", command[0], str(path), *command[1:]])
    assert code == 2
    err = capsys.readouterr().err
    assert err.startswith(f"osmodose: episode {path}: is not valid JSON at line ")
    assert err.endswith(": half-written or corrupt; the file was not changed\n")
    assert path.read_bytes() == half
    assert os.listdir(tmp_path) == ["ep.json"]  # no temporary file left behind


def test_a_failed_write_leaves_the_old_file_whole_and_no_temporary_file(tmp_path: Path, monkeypatch) -> None:
    path = tmp_path / "ep.json"
    save_episode(episode(labs=[lab(0, 130)]), path, create=True)
    before = path.read_bytes()

    def full_disk(*_args: object) -> None:
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(os, "replace", full_disk)
    with pytest.raises(EpisodeFileError) as caught:
        save_episode(episode(labs=[lab(0, 130), lab(1, 131)]), path)
    assert str(caught.value) == f"episode {path}: cannot be written: No space left on device"
    assert path.read_bytes() == before
    assert os.listdir(tmp_path) == ["ep.json"]


def test_new_never_replaces_an_existing_file(tmp_path: Path, capsys) -> None:
    path = tmp_path / "ep.json"
    path.write_text("not mine", encoding="utf-8")
    assert main(["course", "new", str(path), "--weight", "70", "--age", "45", "--sex", "male"]) == 2
    assert capsys.readouterr().err == f"osmodose: episode {path}: already exists; it was not overwritten\n"
    assert path.read_text(encoding="utf-8") == "not mine"


def test_a_write_keeps_the_files_permissions(tmp_path: Path) -> None:
    path = tmp_path / "ep.json"
    save_episode(episode(), path, create=True)
    os.chmod(path, 0o640)
    save_episode(episode(labs=[lab(0, 130)]), path)
    assert oct(path.stat().st_mode & 0o777) == "0o640"
    assert isinstance(load_episode(path), Episode)


def test_an_entry_added_meanwhile_by_another_command_is_never_lost(tmp_path: Path) -> None:
    from osmodose.course.store import read_episode, update_episode

    path = tmp_path / "ep.json"
    save_episode(episode(labs=[lab(0, 130)]), path, create=True)
    opened, digest = read_episode(path)  # a screen holds the episode open...
    update_episode(path, lambda ep: ep.with_entry(lab(1, 131)))  # ...while a command adds a lab
    with pytest.raises(EpisodeFileError) as caught:
        save_episode(opened.with_entry(lab(2, 132)), path, expect_sha256=digest)
    assert str(caught.value) == (
        f"episode {path}: changed on disk since it was read (another command or window?); "
        "nothing was written: reload it"
    )
    assert [x.sodium_mmol_l for x in load_episode(path).labs] == [130, 131]
    assert os.listdir(tmp_path) == ["ep.json"]
