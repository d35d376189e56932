"""Shared fixtures: the demo formulary, and running the command line as a user does."""

from __future__ import annotations

import os
import subprocess
import sys
from datetime import UTC, datetime
from pathlib import Path

import pytest
from hypothesis import HealthCheck, settings

from osmodose.formulary import Formulary, demo_formulary_path, load_formulary

# Property tests judge results, never speed: a busy CI machine must not fail them on time.
settings.register_profile("osmodose", deadline=None, suppress_health_check=[HealthCheck.too_slow])
settings.load_profile("osmodose")

REPO_ROOT = Path(__file__).resolve().parent.parent


@pytest.fixture(scope="session")
def _test_key_folder(tmp_path_factory: pytest.TempPathFactory) -> Path:
    return tmp_path_factory.mktemp("signing-key")


@pytest.fixture(autouse=True)
def _signing_key_outside_home(_test_key_folder: Path, monkeypatch: pytest.MonkeyPatch) -> Path:
    """Every test signs log records with a key of the test run's own ($OSMODOSE_LOG_KEY), never the user's."""
    path = _test_key_folder / "log-signing.key"
    monkeypatch.setenv("OSMODOSE_LOG_KEY", str(path))
    return path


#: The course clock in tests: the invented episodes are dated 1-2 December 2026, so entries stay plausible
#: (not in the future, not older than 30 days) whatever day the tests run.
COURSE_NOW = datetime(2026, 12, 2, 12, 0, tzinfo=UTC)


@pytest.fixture(autouse=True)
def _course_clock(monkeypatch: pytest.MonkeyPatch) -> datetime:
    monkeypatch.setattr("osmodose.course.times.now", lambda: COURSE_NOW)
    return COURSE_NOW


@pytest.fixture(scope="session")
def demo() -> Formulary:
    """The bundled demo formulary (an invented unit)."""
    return load_formulary(demo_formulary_path())


def run_cli(*args: str, input_text: str | None = None, cwd: Path | None = None) -> subprocess.CompletedProcess[str]:
    """Run `python -m osmodose ARGS` in a subprocess, as a user would, from this source tree."""
    env = dict(os.environ)
    env["PYTHONPATH"] = str(REPO_ROOT) + os.pathsep + env.get("PYTHONPATH", "")
    return subprocess.run(
        [sys.executable, "-m", "osmodose", *args],
        capture_output=True,
        text=True,
        input=input_text,
        cwd=cwd or REPO_ROOT,
        env=env,
        timeout=120,
        check=False,
    )
