"""Shared pieces of the course screen tests: a copy of the demo episode, and what `course show --json` says of it."""

from __future__ import annotations

import json
import shutil
from pathlib import Path

import pytest

from osmodose.app.app import OsmodoseApp
from osmodose.app.course_view import open_course
from osmodose.cli.main import main
from osmodose.formulary import Formulary
from tests.conftest import REPO_ROOT

DEMO_EPISODE = REPO_ROOT / "examples" / "demo-episode.json"
#: A lab the next morning (invented): no dose since it, osmolality back under both limits, so the
#: demo's REFUSE (osmolality 326 latest; projected rise 10.2 in 24 h) becomes WARN.
NEXT_LAB = {"time": "2026-12-02T08:00+00:00", "sodium": "147", "glucose": "6", "urea": "5", "osmolality": "305"}


def copy_demo(folder: Path, name: str = "demo-episode.json") -> Path:
    """The demo episode copied into a test's own folder: the repository's example is never written."""
    path = folder / name
    shutil.copyfile(DEMO_EPISODE, path)
    return path


def show_json(path: Path, capsys: pytest.CaptureFixture[str]) -> dict[str, object]:
    """What `osmodose course show FILE --json` reports (in-process)."""
    main(["course", "show", str(path), "--json"])
    return json.loads(capsys.readouterr().out)


def course_app(demo: Formulary, path: Path | None = None) -> OsmodoseApp:
    """The app as `osmodose --episode PATH` starts it (or as plain `osmodose` without a path)."""
    return OsmodoseApp(demo, course=open_course(path, demo) if path is not None else None)
