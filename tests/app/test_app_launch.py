"""Starting the app: the form at once, the formulary read behind it; a bad one ends it with the check's message."""

from __future__ import annotations

import asyncio
import subprocess
import sys
import threading
from pathlib import Path

import pytest

from osmodose.app import launch as launch_module
from osmodose.app.app import OsmodoseApp
from osmodose.app.loading import Loaded, load_files
from osmodose.app.screens.main import MainScreen
from osmodose.app.shown import plain
from osmodose.cli.main import main
from tests.app.driving import MANNITOL, Started, run_headless
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
def started(monkeypatch: pytest.MonkeyPatch) -> list[Started]:
    """`OsmodoseApp.run` headless: each app started, run until its files are read (or found bad)."""
    apps: list[Started] = []
    monkeypatch.setattr(OsmodoseApp, "run", lambda self, *a, **k: run_headless(self, apps))
    return apps


def test_bad_formulary_ends_the_app_with_the_check_message_and_no_figure(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], started: list[Started]
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
    assert len(started) == 2
    for app, main_screen in started:
        assert app.formulary is None and main_screen.outcome is None  # never judged anything
        assert main_screen.shown.state == "loading" and main_screen.shown.values == {}


def test_missing_formulary_file_ends_with_exit_2_and_one_line(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], started: list[Started]
) -> None:
    missing = tmp_path / "none.toml"
    assert launch_module.launch(str(missing)) == 2
    assert capsys.readouterr().err == f"osmodose: formulary {missing}: cannot be read: No such file or directory\n"


def test_no_formulary_opens_the_app_on_the_demo(started: list[Started], capsys: pytest.CaptureFixture[str]) -> None:
    assert main([]) == 0
    [(app, _)] = started
    assert app.demo and app.formulary is not None and app.load_error is None
    assert capsys.readouterr().err == ""


def test_the_form_takes_typing_while_loading_and_judges_it_once_the_formulary_is_read() -> None:
    release = threading.Event()

    def slow_load() -> Loaded:
        release.wait(timeout=30)
        return load_files(None)

    async def go() -> None:
        app = OsmodoseApp(load=slow_load, loading="reading the demo formulary", demo=True)
        async with app.run_test(size=(80, 24)) as pilot:
            screen = app.screen
            assert isinstance(screen, MainScreen)
            await pilot.pause()
            for key, text in MANNITOL.items():
                if key not in ("agent", "dose-mode"):
                    screen.field(key).control.value = text
            await pilot.press("7")  # typed into the focused weight box: "707"
            assert screen.field("weight").value == "707"
            assert screen.shown.state == "loading" and screen.outcome is None
            assert plain(screen.shown.summary) == [
                "◌ reading the demo formulary: no figures until it is read and checked"
            ]
            assert app.check_action("verify", ()) is None  # dimmed until the formulary is read
            release.set()
            while app.formulary is None:
                await pilot.pause(0.01)
            await pilot.pause()
            assert screen.outcome is not None and screen.outcome.field == "weight"  # 707 kg: judged now
            screen.field("weight").control.value = "70"
            screen.field("agent").control.value = "mannitol-20"
            await pilot.pause()
            assert screen.shown.values["volume"] == "350.0 mL (5.00 mL/kg)"

    asyncio.run(go())


def test_engine_and_command_line_do_not_import_textual() -> None:
    code = (
        "import sys, osmodose.check.run, osmodose.check.engine, osmodose.check.report, osmodose.formulary.summary, "
        "osmodose.cli.main, osmodose.app.launch, osmodose.app.view, osmodose.app.loading\n"
        "from osmodose.cli.main import build_parser\n"
        "build_parser()\n"
        "print(sorted(m for m in sys.modules if m.split('.')[0] in ('textual', 'rich')))"
    )
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=REPO_ROOT, check=False)
    assert done.returncode == 0, done.stderr
    assert done.stdout.strip() == "[]"


def test_the_first_frame_needs_neither_pint_nor_pydantic_nor_the_secondary_screens() -> None:
    # The check screen is laid out from the field table alone; the loader thread brings the rest.
    code = (
        "import sys, osmodose.app.app\n"
        "print(sorted({m.split('.')[0] for m in sys.modules} & {'pint', 'pydantic', 'numpy', 'textual_plotext'}))\n"
        "print(sorted(m for m in sys.modules if m.startswith('osmodose.app.screens.')))"
    )
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=REPO_ROOT, check=False)
    assert done.returncode == 0, done.stderr
    assert done.stdout.splitlines() == ["[]", "['osmodose.app.screens.main']"]
