"""The type checker and the linter are part of the suite, so CI fails on a type error or a lint error.

mypy reads its settings from pyproject.toml ([tool.mypy]: every function annotated, unused
`type: ignore` comments reported); ruff checks the code and its formatting.
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

REPO_ROOT = Path(__file__).resolve().parent.parent


def _run(*args: str) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        [sys.executable, "-m", *args], cwd=REPO_ROOT, capture_output=True, text=True, timeout=600, check=False
    )


def test_mypy_finds_no_type_error_in_the_package() -> None:
    done = _run("mypy", "--no-error-summary")
    assert done.returncode == 0, done.stdout + done.stderr


@pytest.mark.parametrize("command", [("ruff", "check", "."), ("ruff", "format", "--check", ".")])
def test_ruff_finds_nothing_to_change(command: tuple[str, ...]) -> None:
    done = _run(*command)
    assert done.returncode == 0, done.stdout + done.stderr
