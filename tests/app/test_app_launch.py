"""Starting the app: a bad formulary stops it with the command line's message; the engine never imports textual."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

from osmodose.app import launch as launch_module
from osmodose.app.app import OsmodoseApp
from osmodose.cli.main import main
from tests.conftest import REPO_ROOT

BAD_KEY = """\
[formulary]
name = "Test unit (invented)"
version = "1"

[[agents]]
id = "nacl-3"
label = "Sodium chloride 3 %"
solute = "sodium chloride"
concentration = "3% w/v"
route = "any-line"
colour = "blue"
"""


@pytest.fixture
def never_run(monkeypatch: pytest.MonkeyPatch) -> list[str]:
    started: list[str] = []
    monkeypatch.setattr(OsmodoseApp, "run", lambda self, *a, **k: started.append("run"))
    return started


def test_bad_formulary_stops_before_the_app_with_the_check_message(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], never_run: list[str]
) -> None:
    path = tmp_path / "unit.toml"
    path.write_text(BAD_KEY, encoding="utf-8")
    assert main(["check", "--formulary", str(path), "--weight", "70", "--age", "40", "--sex", "male",
                 "--sodium", "140"]) == 2  # fmt: skip
    check_message = capsys.readouterr().err
    assert check_message.startswith(f"osmodose: formulary {path}:11: agents[1].colour: ")
    assert launch_module.launch(str(path)) == 2
    assert capsys.readouterr().err == check_message
    assert main(["--formulary", str(path)]) == 2
    assert capsys.readouterr().err == check_message
    assert never_run == []


def test_missing_formulary_file_stops_with_exit_2_and_one_line(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], never_run: list[str]
) -> None:
    missing = tmp_path / "none.toml"
    assert launch_module.launch(str(missing)) == 2
    assert capsys.readouterr().err == f"osmodose: formulary {missing}: cannot be read: No such file or directory\n"
    assert never_run == []


def test_no_formulary_opens_the_app_on_the_demo(never_run: list[str], capsys: pytest.CaptureFixture[str]) -> None:
    assert main([]) == 0
    assert never_run == ["run"]
    assert capsys.readouterr().err == ""


def test_engine_and_command_line_do_not_import_textual() -> None:
    code = (
        "import sys, osmodose.check.run, osmodose.check.engine, osmodose.check.report, osmodose.formulary.summary, "
        "osmodose.cli.main, osmodose.app.launch, osmodose.app.view\n"
        "from osmodose.cli.main import build_parser\n"
        "build_parser()\n"
        "print(sorted(m for m in sys.modules if m.split('.')[0] in ('textual', 'rich')))"
    )
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=REPO_ROOT, check=False)
    assert done.returncode == 0, done.stderr
    assert done.stdout.strip() == "[]"
