"""atomic_write: the one way files are written: never over a file unasked, never through a link, nothing left behind."""

from __future__ import annotations

import os
import stat
from pathlib import Path

import pytest

from osmodose.storage.atomic import DestinationIsALink, atomic_write, atomic_writer, stale_temporaries


def leftovers(folder: Path) -> list[str]:
    return sorted(name for name in os.listdir(folder) if name.endswith(".tmp"))


def test_a_new_file_is_written_whole(tmp_path: Path) -> None:
    path = tmp_path / "out.txt"
    atomic_write(path, "dose 1 g/kg\n")
    assert path.read_text(encoding="utf-8") == "dose 1 g/kg\n"
    assert leftovers(tmp_path) == []


def test_an_existing_file_is_never_replaced_unless_asked(tmp_path: Path) -> None:
    path = tmp_path / "out.txt"
    path.write_text("five records", encoding="utf-8")
    with pytest.raises(FileExistsError):
        atomic_write(path, "a summary")
    assert path.read_text(encoding="utf-8") == "five records"
    assert leftovers(tmp_path) == []
    atomic_write(path, "a summary", overwrite=True)
    assert path.read_text(encoding="utf-8") == "a summary"


@pytest.mark.parametrize("overwrite", [False, True])
def test_a_symlink_at_the_destination_is_neither_followed_nor_replaced(tmp_path: Path, overwrite: bool) -> None:
    target = tmp_path / "precious.json"
    target.write_text("patient data", encoding="utf-8")
    link = tmp_path / "link.png"
    link.symlink_to(target)
    with pytest.raises(DestinationIsALink):
        atomic_write(link, b"PNG", overwrite=overwrite)
    assert target.read_text(encoding="utf-8") == "patient data"
    assert link.is_symlink()


def test_a_dangling_symlink_is_not_followed(tmp_path: Path) -> None:
    link = tmp_path / "template.toml"
    link.symlink_to(tmp_path / "elsewhere" / "new.toml")
    with pytest.raises(DestinationIsALink):
        atomic_write(link, "x")
    assert not (tmp_path / "elsewhere").exists()


def test_an_error_inside_the_block_leaves_no_file_and_no_temporary(tmp_path: Path) -> None:
    path = tmp_path / "results.csv"
    with pytest.raises(RuntimeError), atomic_writer(path, text=True) as handle:
        handle.write("row 1\n")
        raise RuntimeError("the audit stopped")
    assert not path.exists()
    assert leftovers(tmp_path) == []


def test_an_error_keeps_the_old_file(tmp_path: Path) -> None:
    path = tmp_path / "results.csv"
    path.write_text("old results", encoding="utf-8")
    with pytest.raises(RuntimeError), atomic_writer(path, overwrite=True) as handle:
        handle.write(b"half")
        raise RuntimeError
    assert path.read_text(encoding="utf-8") == "old results"
    assert leftovers(tmp_path) == []


def test_a_full_disk_is_an_oserror_and_leaves_nothing(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    from osmodose.storage import atomic

    def full(fd: int) -> None:  # the disk fills while the data is flushed
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(atomic.os, "fsync", full)
    path = tmp_path / "plot.png"
    with pytest.raises(OSError) as caught:
        atomic_write(path, b"x" * 100)
    assert caught.value.strerror == "No space left on device"
    assert not path.exists() and leftovers(tmp_path) == []


def test_mode_is_kept_when_replacing_and_private_when_asked(tmp_path: Path) -> None:
    path = tmp_path / "episode.json"
    path.write_text("{}", encoding="utf-8")
    os.chmod(path, 0o640)
    atomic_write(path, "{}\n", overwrite=True)
    assert stat.S_IMODE(path.stat().st_mode) == 0o640
    private = tmp_path / "new.json"
    atomic_write(private, "{}", mode=0o600)
    assert stat.S_IMODE(private.stat().st_mode) == 0o600


def test_stale_temporaries_are_found_by_their_name(tmp_path: Path) -> None:
    path = tmp_path / "bed3.json"
    stale = tmp_path / ".bed3.json.0123abcd.tmp"
    stale.write_text("half a file", encoding="utf-8")
    (tmp_path / ".bed3.json.notours.tmp").write_text("", encoding="utf-8")
    (tmp_path / ".other.json.0123abcd.tmp").write_text("", encoding="utf-8")
    assert stale_temporaries(path) == [stale]
