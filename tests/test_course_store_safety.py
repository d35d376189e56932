"""Episode files: no lost entries under concurrent saves, no temporary copies left, no traceback from any file."""

from __future__ import annotations

import json
import multiprocessing
import os
import signal
import subprocess
import sys
from pathlib import Path

import pytest

from osmodose.cli.main import main
from osmodose.course.store import load_episode, read_episode, save_episode, update_episode
from osmodose.errors import EpisodeFileError
from tests.conftest import REPO_ROOT
from tests.course_build import T0, episode, lab

UNCHANGED = "; the file was not changed"
WRITERS = 4
ENTRIES_EACH = 50


def _app_writer(path: str, writer: int, acknowledged: multiprocessing.Queue) -> None:  # type: ignore[type-arg]
    """Adds labs as the app's course screen saves them (course_view.add_entry without the redraw): read the file,
    parse the typed lab, save only if the file is unchanged since it was read.

    A save refused because another writer changed the file meanwhile is read
    again and retried, as the screen asks its user to do; every save that
    returned is an acknowledged entry.
    """
    from datetime import timedelta

    from osmodose.course.entries import parse_lab
    from osmodose.course.store import CHANGED_MEANWHILE

    for k in range(ENTRIES_EACH):
        minute = writer * ENTRIES_EACH + k + 1
        values = {"time": (T0 + timedelta(minutes=minute)).isoformat(), "sodium": str(120 + minute % 30)}
        while True:
            episode, digest = read_episode(path)
            try:
                save_episode(episode.with_entry(parse_lab(values)), path, expect_sha256=digest)
            except EpisodeFileError as error:
                assert CHANGED_MEANWHILE in str(error), error
                continue
            acknowledged.put(minute)
            break


def test_four_concurrent_writers_through_the_apps_path_lose_no_entry(tmp_path: Path) -> None:
    path = tmp_path / "ep.json"
    save_episode(episode(), path, create=True)
    context = multiprocessing.get_context("spawn")
    acknowledged = context.Queue()
    writers = [context.Process(target=_app_writer, args=(str(path), w, acknowledged)) for w in range(WRITERS)]
    for process in writers:
        process.start()
    for process in writers:
        process.join(timeout=300)
        assert process.exitcode == 0
    saved = sorted(acknowledged.get(timeout=5) for _ in range(WRITERS * ENTRIES_EACH))
    on_disk = load_episode(path)
    times = sorted(round((x.time - T0).total_seconds() / 60) for x in on_disk.labs)
    assert times == saved == list(range(1, WRITERS * ENTRIES_EACH + 1))  # lost: 0
    assert len({x.id for x in on_disk.labs}) == WRITERS * ENTRIES_EACH
    assert sorted(os.listdir(tmp_path)) == ["ep.json"]


def test_a_temporary_copy_left_by_a_kill_is_reported_and_removed_on_the_next_save(tmp_path: Path, capsys) -> None:
    path = tmp_path / "ep.json"
    save_episode(episode(labs=[lab(0, 130)]), path, create=True)
    stale = tmp_path / ".ep.json.9f8e7d6c.tmp"
    stale.write_text('{"format_version": 3, "patient": ', encoding="utf-8")  # what a kill -9 mid-write leaves
    assert main(["course", "add-lab", str(path), "--time", "2026-12-01T09:00Z", "--sodium", "131"]) == 0
    assert capsys.readouterr().err == (
        f"osmodose: note: removed {stale}, a copy left unfinished by an interrupted save (the episode itself is "
        "whole)\n"
    )
    assert sorted(os.listdir(tmp_path)) == ["ep.json"]


def test_a_save_killed_mid_write_leaves_the_old_file_and_the_next_save_cleans_up(tmp_path: Path) -> None:
    path = tmp_path / "ep.json"
    save_episode(episode(labs=[lab(0, 130)]), path, create=True)
    before = path.read_bytes()
    # A writer that stops for good between writing its temporary copy and renaming it (as kill -9 would).
    code = (
        "import os, sys\n"
        "import osmodose.storage.atomic as atomic\n"
        "from osmodose.course.store import save_episode, load_episode\n"
        "def stop(*a, **k):\n"
        "    os.kill(os.getpid(), 9)\n"
        "atomic._commit = stop\n"
        "ep = load_episode(sys.argv[1])\n"
        "save_episode(ep, sys.argv[1])\n"
    )
    env = dict(os.environ, PYTHONPATH=str(REPO_ROOT))
    done = subprocess.run([sys.executable, "-c", code, str(path)], env=env, check=False, capture_output=True)
    assert done.returncode == -signal.SIGKILL
    leftovers = [name for name in os.listdir(tmp_path) if name.endswith(".tmp")]
    assert len(leftovers) == 1  # the killed writer's copy of patient data
    assert path.read_bytes() == before
    notes: list[str] = []
    update_episode(path, lambda ep: ep.with_entry(lab(1, 131)), notes.append)
    assert len(notes) == 1 and leftovers[0] in notes[0]
    assert sorted(os.listdir(tmp_path)) == ["ep.json"]


def test_a_failed_write_leaves_no_temporary_file(tmp_path: Path, monkeypatch) -> None:
    from osmodose.storage import atomic

    path = tmp_path / "ep.json"
    save_episode(episode(labs=[lab(0, 130)]), path, create=True)

    def full(fd: int) -> None:
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(atomic.os, "fsync", full)
    with pytest.raises(EpisodeFileError) as caught:
        update_episode(path, lambda ep: ep.with_entry(lab(1, 131)))
    assert str(caught.value) == f"episode {path}: cannot be written: No space left on device"
    assert sorted(os.listdir(tmp_path)) == ["ep.json"]


def test_an_episode_behind_a_symlink_is_read_but_never_written_through_it(tmp_path: Path) -> None:
    real = tmp_path / "real.json"
    save_episode(episode(labs=[lab(0, 130)]), real, create=True)
    link = tmp_path / "link.json"
    link.symlink_to(real)
    assert len(load_episode(link).labs) == 1
    with pytest.raises(EpisodeFileError) as caught:
        update_episode(link, lambda ep: ep.with_entry(lab(1, 131)))
    assert str(caught.value) == (
        f"episode {link}: is a symbolic link: osmodose never writes through or over a link (open the file itself)"
        f"{UNCHANGED}"
    )
    assert len(load_episode(real).labs) == 1 and link.is_symlink()


V2_HEAD = '{"format_version": 2, "patient": {"weight_kg": 70, "age_years": 45, "sex": "male"}'


@pytest.mark.parametrize(
    ("text", "problem"),
    [
        (
            '{"format_version": 1, "patient": {"weight_kg": 70, "age_years": 45, "sex": "male"}, "labs": null}',
            "labs: is null, not a list of entries, so it cannot be carried to the new format",
        ),
        (
            '{"format_version": 1, "patient": {"weight_kg": 70, "age_years": 45, "sex": "male"}, "labs": 5}',
            "labs: is int, not a list of entries, so it cannot be carried to the new format",
        ),
        (
            '{"format_version": 1, "patient": {"weight_kg": 70, "age_years": 45, "sex": "male"}, "doses": [7]}',
            "doses[1]: is not an object",
        ),
        (V2_HEAD + ', "labs": [{"time": "2026-12-01T08:00Z",\n"sodium_mmol_l": 140,\n"sodium_mmol_l": 14}]}',
         'line 3: key "sodium_mmol_l" is written twice in one object'),
        (V2_HEAD + ',\n"labs": [], "labs": [{"time": "2026-12-01T08:00Z", "sodium_mmol_l": 140}]}',
         'line 2: key "labs" is written twice in one object'),
        (V2_HEAD + ', "labs": [{"time": "2026-12-01T08:00Z", "sodium_mmol_l": 1' + "4" * 5000 + "}]}",
         "line 1: a number 5001 characters long is too long to be a number"),
        ('{"format_version": 2, "patient": ' + "[" * 5000 + "]" * 5000 + "}",
         "is nested far deeper than the 8 levels the format needs"),
        ('{"format_version": 2, "patient": ' + "[" * 20 + "]" * 20 + "}",
         "is nested deeper than the 8 levels the format needs"),
        ('{"format_version": 2, "patient": {"weight_kg": NaN, "age_years": 45, "sex": "male"}}',
         "NaN is not a number JSON allows"),
        ('{"format_version": 5, "patient": {"weight_kg": 70, "age_years": 45, "sex": "male"}, '
         '"labs": [{"time": "2026-12-01T08:00Z", "sodium_mmol_l": 140}]}',
         "labs[1].id is missing"),
    ],
)  # fmt: skip
def test_a_bad_episode_file_is_one_line_naming_what_is_wrong(tmp_path: Path, text: str, problem: str) -> None:
    path = tmp_path / "ep.json"
    path.write_text(text, encoding="utf-8")
    with pytest.raises(EpisodeFileError) as caught:
        load_episode(path)
    assert str(caught.value) == f"episode {path}: {problem}{UNCHANGED}"


def test_readings_in_an_old_format_file_are_carried_not_dropped(tmp_path: Path) -> None:
    path = tmp_path / "old.json"
    path.write_text(
        json.dumps(
            {
                "format_version": 1,
                "patient": {"weight_kg": 70, "age_years": 45, "sex": "male"},
                "labs": [{"time": "2026-12-01T08:00:00", "sodium": 140}],
                "readings": [{"time": "2026-12-01T09:00:00", "map_mmhg": 80, "icp_mmhg": 20}],
            }
        ),
        encoding="utf-8",
    )
    ep = load_episode(path)
    assert [(r.id, r.map_mmhg, r.icp_mmhg, r.time.isoformat()) for r in ep.readings] == [
        ("R1", 80.0, 20.0, "2026-12-01T09:00:00+00:00")
    ]


def test_an_old_file_with_a_key_the_format_does_not_know_is_refused_naming_it(tmp_path: Path) -> None:
    path = tmp_path / "old.json"
    path.write_text(
        '{"format_version": 1, "patient": {"weight_kg": 70, "age_years": 45, "sex": "male"}, "notes": ["x"]}',
        encoding="utf-8",
    )
    with pytest.raises(EpisodeFileError) as caught:
        load_episode(path)
    unknown = "is not a key osmodose knows here (a misspelt key would lose its value)"
    assert str(caught.value) == f"episode {path}: notes: {unknown}{UNCHANGED}"


@pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="needs FIFOs")
def test_a_fifo_as_an_episode_is_refused_without_waiting(tmp_path: Path) -> None:
    fifo = tmp_path / "ep.json"
    os.mkfifo(fifo)
    with pytest.raises(EpisodeFileError) as caught:
        read_episode(fifo)
    assert str(caught.value) == f"episode {fifo}: is a pipe (FIFO), not a file osmodose can read{UNCHANGED}"


@pytest.mark.skipif(not Path("/dev/urandom").exists(), reason="needs /dev/urandom")
def test_a_device_as_an_episode_is_refused(capsys) -> None:
    assert main(["course", "show", "/dev/urandom"]) == 2
    assert capsys.readouterr().err == (
        f"osmodose: episode /dev/urandom: is a device, not a file osmodose can read{UNCHANGED}\n"
    )


def test_an_episode_over_50_mb_is_refused_before_reading(tmp_path: Path) -> None:
    path = tmp_path / "big.json"
    with path.open("wb") as handle:
        handle.truncate(50_000_001)  # sparse: no disk used
    with pytest.raises(EpisodeFileError) as caught:
        read_episode(path)
    assert str(caught.value) == (
        f"episode {path}: is 50,000,001 bytes, over the 50 MB limit for this kind of file "
        f"(see docs/file-limits.md){UNCHANGED}"
    )
