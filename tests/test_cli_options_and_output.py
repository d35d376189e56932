"""Options are never guessed or silently overridden; output that cannot be written is one line and exit 2."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest

from osmodose.cli.main import main
from tests.conftest import REPO_ROOT

CHECK = ["check", "--weight", "70", "--age", "45", "--sex", "male", "--sodium", "141"]


def test_an_option_given_twice_with_different_values_is_an_input_error(capsys) -> None:
    with pytest.raises(SystemExit) as stopped:
        main([*CHECK, "--weight", "7"])
    assert stopped.value.code == 2
    assert capsys.readouterr().err == (
        "osmodose check: --weight: given twice with different values (70 and 7): give it once "
        "(see osmodose check --help)\n"
    )


def test_the_same_value_twice_is_accepted(capsys) -> None:
    assert main([*CHECK, "--weight=70"]) == 0


def test_an_abbreviated_option_is_not_guessed(capsys) -> None:
    with pytest.raises(SystemExit) as stopped:
        main([*CHECK, "--agent", "nacl-3", "--target", "5"])
    assert stopped.value.code == 2
    assert "unrecognized arguments: --target 5" in capsys.readouterr().err


def test_a_formulary_before_and_after_the_subcommand_must_agree(capsys) -> None:
    with pytest.raises(SystemExit) as stopped:
        main(["--formulary", "a.toml", *CHECK, "--formulary", "b.toml"])
    assert stopped.value.code == 2
    assert "--formulary: given twice with different values (a.toml and b.toml)" in capsys.readouterr().err


def test_repeatable_options_still_repeat(tmp_path, capsys) -> None:
    # --accept is given once per warning (append), never a conflict.
    log = tmp_path / "log.jsonl"
    code = main(
        [
            "verify", *CHECK[1:], "--agent", "mannitol-20", "--volume", "350", "--duration", "20",
            "--accept", "volume-not-a-presentation=drawn from a 500 mL bag",
            "--accept", "line-not-stated=peripheral osmolarity known to the team",
            "--initials", "AB", "--log", str(log),
        ]
    )  # fmt: skip
    assert code == 3  # held: another warning (no osmolality measured) is not accepted
    out = capsys.readouterr().out
    assert "accepted by AB: volume-not-a-presentation: drawn from a 500 mL bag" in out
    assert "accepted by AB: line-not-stated: peripheral osmolarity known to the team" in out


def _run_with_stdout(args: list[str], stdout: object, close_stdout: bool = False) -> subprocess.CompletedProcess[str]:
    env = dict(os.environ)
    env["PYTHONPATH"] = str(REPO_ROOT) + os.pathsep + env.get("PYTHONPATH", "")
    return subprocess.run(
        [sys.executable, "-m", "osmodose", *args],
        stdout=stdout,  # type: ignore[arg-type]
        stderr=subprocess.PIPE,
        text=True,
        env=env,
        cwd=REPO_ROOT,
        timeout=120,
        check=False,
        preexec_fn=(lambda: os.close(1)) if close_stdout else None,
    )


@pytest.mark.skipif(not Path("/dev/full").exists(), reason="needs /dev/full")
@pytest.mark.parametrize(
    "args",
    [CHECK, ["formulary", "show"], ["formulary", "schema"], ["formulary", "new"], [*CHECK, "--json"]],
    ids=["check", "formulary show", "formulary schema", "formulary new", "check --json"],
)
def test_a_full_disk_on_stdout_is_one_line_and_exit_two(args: list[str]) -> None:
    with open("/dev/full", "w") as full:
        done = _run_with_stdout(args, full)
    assert done.returncode == 2
    assert done.stderr == "osmodose: the output cannot be written: No space left on device\n"


@pytest.mark.parametrize("args", [CHECK, ["formulary", "show"]], ids=["check", "formulary show"])
def test_a_closed_stdout_is_one_line_and_exit_two(args: list[str]) -> None:
    done = _run_with_stdout(args, None, close_stdout=True)
    assert done.returncode == 2
    assert done.stderr == "osmodose: standard output is closed: nothing was done\n"
