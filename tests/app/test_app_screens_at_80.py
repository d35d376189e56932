"""At 80x24 nothing is cut: footers fit, tables wrap, Tab on the verification screen stops only at boxes."""

from __future__ import annotations

from rich.console import Console
from textual.widgets import Checkbox, Input
from textual.widgets._footer import FooterKey

from osmodose.app.screens.formulary import FormularyScreen
from osmodose.app.widgets.choice_box import ChoiceBox
from tests.app.driving import PERIPHERAL_SALINE, VERIFY_PATIENT, make_app, open_verification, sync

SIZE = (80, 24)


def footer_width(screen: object) -> int:
    return sum(key.size.width for key in screen.query(FooterKey))  # type: ignore[attr-defined]


@sync
async def test_every_footer_key_fits_at_80_columns_on_every_screen() -> None:
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        for key in ("f1", "escape", "f2", "escape", "f3", "escape", "f4"):
            await pilot.press(key)
            await pilot.pause()
            shown = list(app.screen.query(FooterKey))
            assert shown, type(app.screen).__name__
            assert footer_width(app.screen) <= SIZE[0], [k.key for k in shown]


@sync
async def test_tab_on_the_verification_screen_never_lands_on_anything_but_a_box() -> None:
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await open_verification(pilot, VERIFY_PATIENT, PERIPHERAL_SALINE, initials="AB", typed=False)
        seen = []
        for _ in range(14):  # more than once round every box, accept box and reason
            await pilot.press("tab")
            focused = app.focused
            assert isinstance(focused, (Input, ChoiceBox, Checkbox)), f"Tab landed on {focused!r}"
            seen.append(focused.id)
        assert "accept-peripheral-osmolarity" in seen and "reason-peripheral-osmolarity" in seen


@sync
async def test_formulary_tables_wrap_and_cut_no_cell_at_80_columns() -> None:
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await pilot.press("f2")
        screen = app.screen
        assert isinstance(screen, FormularyScreen)
        console = Console(width=76, record=True, color_system=None)
        for table in screen.tables.values():
            console.print(table)
        text = " ".join(console.export_text().split())
        for rows in (screen.composition, screen.stock, screen.limits):
            for row in rows:
                for cell in row:
                    for word in cell.split():
                        assert word in text or any(word.startswith(part) for part in text.split()), word
        assert "…" not in text
