"""formulary new --out and audit --out go through atomic_write: no link followed, a full disk is one line."""

from __future__ import annotations

import os
from pathlib import Path

import pytest

from osmodose.cli.main import main
from tests.test_audit_cli import ORDERS, write


def test_formulary_new_never_follows_a_dangling_symlink(tmp_path: Path, capsys) -> None:
    link = tmp_path / "unit.toml"
    link.symlink_to(tmp_path / "elsewhere.toml")
    for force in ((), ("--force",)):
        assert main(["formulary", "new", "--out", str(link), *force]) == 2
        assert capsys.readouterr().err == (
            f"osmodose: formulary {link}: is a symbolic link: osmodose never writes through or over one\n"
        )
    assert not (tmp_path / "elsewhere.toml").exists()


def test_formulary_new_never_replaces_without_force(tmp_path: Path, capsys) -> None:
    out = tmp_path / "unit.toml"
    out.write_text("# the unit's own\n", encoding="utf-8")
    assert main(["formulary", "new", "--out", str(out)]) == 2
    assert "already exists: choose another file or add --force to overwrite it" in capsys.readouterr().err
    assert out.read_text(encoding="utf-8") == "# the unit's own\n"
    assert main(["formulary", "new", "--out", str(out), "--force"]) == 0
    assert out.read_text(encoding="utf-8").startswith("#")
    assert sorted(os.listdir(tmp_path)) == ["unit.toml"]


def test_audit_out_on_a_full_disk_is_one_line_and_leaves_nothing(tmp_path: Path, capsys, monkeypatch) -> None:
    from osmodose.storage import atomic

    def full(fd: int) -> None:
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(atomic.os, "fsync", full)
    orders = write(tmp_path, ORDERS)
    target = tmp_path / "results.csv"
    assert main(["audit", str(orders), "--out", str(target)]) == 2
    assert capsys.readouterr().err.endswith(f"osmodose: out: {target} cannot be written (No space left on device)\n")
    assert sorted(os.listdir(tmp_path)) == ["orders.csv"]


def test_audit_out_never_writes_through_a_symlink(tmp_path: Path, capsys) -> None:
    orders = write(tmp_path, ORDERS)
    precious = tmp_path / "precious.csv"
    precious.write_text("keep me\n", encoding="utf-8")
    link = tmp_path / "results.csv"
    link.symlink_to(precious)
    assert main(["audit", str(orders), "--out", str(link), "--force"]) == 2
    assert capsys.readouterr().err.endswith(
        f"osmodose: out: {link} is a symbolic link: osmodose never writes through or over one\n"
    )
    assert precious.read_text(encoding="utf-8") == "keep me\n"


@pytest.mark.parametrize("overwrite", [False, True])
def test_the_audit_keeps_its_partial_file_nowhere(tmp_path: Path, capsys, overwrite: bool) -> None:
    orders = write(tmp_path, ORDERS)
    target = tmp_path / "results.json"
    if overwrite:
        target.write_text("{}", encoding="utf-8")
    args = ["audit", str(orders), "--out", str(target), *(["--force"] if overwrite else [])]
    assert main(args) == 1  # some rows of ORDERS cannot be audited: listed, the rest written
    assert sorted(os.listdir(tmp_path)) == ["orders.csv", "results.json"]
