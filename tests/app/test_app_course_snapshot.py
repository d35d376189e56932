"""The course screen's plot tab at 80x24 on the demo episode (review the SVG after --snapshot-update).

Deterministic: the episode's times are fixed (no clock), the file is named by a
relative path in the test's own folder, and the plot is drawn from the file alone.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

import pytest
from textual.pilot import Pilot

from osmodose.formulary import Formulary
from tests.app.course_driving import copy_demo, course_app


async def plot_tab(pilot: Pilot) -> None:
    await pilot.press("2")
    await pilot.pause()


def test_course_screen_plot_snapshot(
    snap_compare: Callable[..., bool], tmp_path: Path, demo: Formulary, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.chdir(tmp_path)
    app = course_app(demo, Path(copy_demo(tmp_path).name))
    assert snap_compare(app, terminal_size=(80, 24), run_before=plot_tab)
