"""The main screens at 80x24: the check in its ok, warn, refuse and refused-order states, the verification
screen, and the course timeline with rows past a limit.  Review the SVGs (as PNGs) after --snapshot-update.

Deterministic: no clock, no random, and the screen names the formulary by name,
version and short SHA-256 only, never by its path.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

import pytest
from textual.pilot import Pilot
from textual.widgets import Input

from osmodose.formulary import Formulary
from tests.app.course_driving import copy_demo, course_app
from tests.app.driving import (
    MANNITOL,
    REFUSE,
    SALINE,
    TEN_FOLD_MANNITOL,
    VERIFY_PATIENT,
    fill,
    make_app,
    open_verification,
)

#: Labs alone past a hard limit (measured osmolality 325 > 320 mOsm/kg): REFUSE with no order.
LABS_REFUSE = {k: v for k, v in REFUSE.items() if k not in ("agent", "amount", "duration")}


def filled(fields: dict[str, str]) -> Callable[[Pilot], object]:
    async def run_before(pilot: Pilot) -> None:
        await fill(pilot, fields)
        for box in pilot.app.screen.query(Input):
            box.cursor_blink = False  # a blinking cursor is a clock: keep it steadily on
        pilot.app.screen.field("weight").control.focus()  # type: ignore[attr-defined]
        await pilot.pause()

    return run_before


@pytest.mark.parametrize(
    ("fields", "theme"),
    [
        pytest.param(MANNITOL, "textual-dark", id="ok-dark"),
        pytest.param(SALINE, "textual-dark", id="warn-dark"),
        pytest.param(LABS_REFUSE, "textual-dark", id="refuse-dark"),
        pytest.param(REFUSE, "textual-dark", id="refused-order-dark"),
        pytest.param(REFUSE, "textual-light", id="refused-order-light"),
    ],
)
def test_main_screen_snapshot(snap_compare: Callable[..., bool], fields: dict[str, str], theme: str) -> None:
    assert snap_compare(make_app(theme), terminal_size=(80, 24), run_before=filled(fields))


async def refused_verification(pilot: Pilot) -> None:
    await open_verification(pilot, VERIFY_PATIENT, TEN_FOLD_MANNITOL, initials="AB", typed=False)
    for box in pilot.app.screen.query(Input):
        box.cursor_blink = False
    pilot.app.screen.query_one("#field-volume").focus()
    await pilot.pause()


def test_verification_screen_snapshot_refused(snap_compare: Callable[..., bool]) -> None:
    """The 10-fold mannitol order: refused, two refusals with no accept box, one warning with one."""
    assert snap_compare(make_app(), terminal_size=(80, 24), run_before=refused_verification)


def test_course_timeline_snapshot_marks_rows_past_a_limit(
    snap_compare: Callable[..., bool], tmp_path: Path, demo: Formulary, monkeypatch: pytest.MonkeyPatch
) -> None:
    """The demo episode: its 20:00 lab (osmolality 326 > 320) marked REFUSE by word and colour in the timeline."""
    monkeypatch.chdir(tmp_path)
    app = course_app(demo, Path(copy_demo(tmp_path).name))
    assert snap_compare(app, terminal_size=(80, 24))
