"""The command line imports only the subcommand it was given; `--help` still lists them all."""

from __future__ import annotations

import importlib
import subprocess
import sys

import pytest

from osmodose.cli.commands import COMMANDS
from osmodose.cli.main import given_command
from tests.conftest import REPO_ROOT, run_cli

CHECK = ["check", "--weight", "70", "--age", "45", "--sex", "male", "--sodium", "141"]


def _modules_after(argv: list[str]) -> set[str]:
    code = (
        "import sys, io, contextlib\n"
        "from osmodose.cli.main import main\n"
        "with contextlib.redirect_stdout(io.StringIO()):\n"
        f"    main({argv!r})\n"
        "print(' '.join(m for m in sys.modules if m.startswith('osmodose')))"
    )
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=REPO_ROOT, check=True)
    return set(done.stdout.split())


def test_check_imports_no_other_commands_module() -> None:
    loaded = _modules_after(CHECK)
    assert "osmodose.cli.check_cmd" in loaded
    others = {c.module for c in COMMANDS if c.name != "check"}
    assert loaded & others == set()
    # Nor the modules only other commands need.
    assert not any(m.startswith(("osmodose.course", "osmodose.verify", "osmodose.audit")) for m in loaded)
    assert "osmodose.formulary.diff" not in loaded and "osmodose.formulary.template" not in loaded


def test_help_lists_every_command_with_its_one_line_help() -> None:
    done = run_cli("--help")
    assert done.returncode == 0
    flat = " ".join(done.stdout.split())
    for command in COMMANDS:
        assert f"{command.name} {command.help}" in flat


@pytest.mark.parametrize("command", COMMANDS, ids=lambda c: c.name)
def test_each_commands_own_help_line_comes_from_the_table(command) -> None:
    assert command.help == importlib.import_module(command.module).HELP


@pytest.mark.parametrize(
    ("argv", "word"),
    [
        (CHECK, "check"),
        (["--formulary", "check", "check"], "check"),  # the file may be called "check"
        (["--formulary=f.toml", "audit", "x.csv"], "audit"),
        (["--formulary", "f.toml", "log", "list"], "log"),  # (abbreviated options are refused: test_cli_options...)
        (["formulary", "validate"], "formulary"),
        (["--episode", "e.json"], None),
        ([], None),
    ],
)
def test_the_command_word_is_found_as_argparse_finds_it(argv: list[str], word: str | None) -> None:
    assert given_command(argv) == word


def test_an_unknown_command_names_every_command() -> None:
    done = run_cli("bogus")
    assert done.returncode == 2
    assert "invalid choice: 'bogus'" in done.stderr
    for command in COMMANDS:
        assert repr(command.name) in done.stderr


def test_a_commands_own_help_is_its_full_parser() -> None:
    done = run_cli("audit", "--help")
    assert done.returncode == 0
    assert "--summary" in done.stdout and "--formulary FILE" in done.stdout
