"""Ctrl+S never replaces an existing file without a yes in a confirm dialog, and never writes through a link."""

from __future__ import annotations

from pathlib import Path

from textual.widgets import Input

from osmodose.app.screens.confirm import ConfirmReplace
from osmodose.app.screens.main import MainScreen
from osmodose.app.screens.save import SaveScreen
from osmodose.check.handover import NO_LABEL
from osmodose.formulary import Formulary
from tests.app.driving import MANNITOL, fill, make_app, sync
from tests.app.test_app_keys import SIZE, is_handover_of

LOG = "".join(f'{{"sha256":"{n}","entry":{{}}}}\n' for n in range(5))  # stands for a 5-record verification log


async def _save_to(pilot, app, target: Path) -> None:  # type: ignore[no-untyped-def]
    await fill(pilot, MANNITOL)
    await pilot.press("ctrl+s")
    app.screen.query_one("#save-path", Input).value = str(target)
    await pilot.press("enter")


@sync
async def test_an_existing_file_is_kept_unless_the_user_says_yes(tmp_path: Path) -> None:
    target = tmp_path / "verifications.jsonl"
    target.write_text(LOG, encoding="utf-8")
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await _save_to(pilot, app, target)
        assert isinstance(app.screen, ConfirmReplace)
        assert str(app.screen.query_one("#confirm-question").render()) == (
            f"{target} already exists. Replace it with this summary? Its content is lost."
        )
        await pilot.press("n")
        assert isinstance(app.screen, SaveScreen)
        assert str(app.screen.query_one("#save-message").render()) == (
            f"not saved: {target} was kept as it is; give another name, or escape"
        )
        await pilot.press("enter")  # again: asked again
        assert isinstance(app.screen, ConfirmReplace)
        await pilot.press("escape")
        assert isinstance(app.screen, SaveScreen)
    assert target.read_text(encoding="utf-8") == LOG


@sync
async def test_yes_replaces_it(tmp_path: Path, demo: Formulary) -> None:
    target = tmp_path / "summary.txt"
    target.write_text("an older summary", encoding="utf-8")
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await _save_to(pilot, app, target)
        await pilot.press("y")
        assert isinstance(app.screen, MainScreen)
    assert is_handover_of(target.read_text(encoding="utf-8"), demo, NO_LABEL)


@sync
async def test_a_symbolic_link_is_never_written_through(tmp_path: Path) -> None:
    precious = tmp_path / "verifications.jsonl"
    precious.write_text(LOG, encoding="utf-8")
    link = tmp_path / "summary.txt"
    link.symlink_to(precious)
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await _save_to(pilot, app, link)
        assert isinstance(app.screen, SaveScreen)
        assert str(app.screen.query_one("#save-message").render()) == (
            f"cannot save to {link}: it is a symbolic link (osmodose never writes through or over one)"
        )
    assert precious.read_text(encoding="utf-8") == LOG
