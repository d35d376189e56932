"""Every action is a key shown in the footer: help, formulary, save, copy, new case, light/dark."""

from __future__ import annotations

from pathlib import Path

from textual.binding import Binding
from textual.widgets import Input
from textual.widgets._footer import FooterKey

from osmodose import __version__
from osmodose.app import keys
from osmodose.app.app import OsmodoseApp
from osmodose.app.help_text import FIGURE_HELP
from osmodose.app.screens.formulary import FormularyScreen
from osmodose.app.screens.help import HelpScreen
from osmodose.app.screens.main import MainScreen
from osmodose.app.screens.save import SaveScreen
from osmodose.app.view import DOSE_FIGURES, PATIENT_FIGURES
from osmodose.case.inputs import parse_check_request
from osmodose.caution import CAUTION
from osmodose.check.handover import NO_LABEL, RULE, TITLE
from osmodose.check.report import render_text
from osmodose.check.run import run_check
from osmodose.formulary import Formulary
from osmodose.formulary.summary import agent_rows, limit_rows
from tests.app.driving import MANNITOL, MANNITOL_ARGS, fill, main_screen, make_app, sync

SIZE = (80, 24)
ACTIONS = [b for b in OsmodoseApp.BINDINGS + MainScreen.BINDINGS if isinstance(b, Binding)]


def mannitol_summary(demo: Formulary) -> str:
    fields = {MANNITOL_ARGS[i][2:]: MANNITOL_ARGS[i + 1] for i in range(0, len(MANNITOL_ARGS), 2)}
    return render_text(run_check(parse_check_request(fields), demo))


@sync
async def test_every_action_is_a_described_key_in_the_footer_or_left_out_on_purpose() -> None:
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await pilot.pause()
        shown = {(k.key, k.description) for k in app.screen.query(FooterKey)}
        # A key a screen binds again with show=False is left out of that footer to fit 80 columns.
        quiet = {b.key for b in MainScreen.BINDINGS if isinstance(b, Binding) and not b.show}
        assert quiet == {"ctrl+t"}
        assert {(b.key, b.description) for b in ACTIONS if b.key not in quiet} <= shown
        assert all(b.description for b in ACTIONS)


@sync
async def test_help_lists_every_key_and_every_figure() -> None:
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await pilot.press("f1")
        assert isinstance(app.screen, HelpScreen)
        listed = {(key, text) for _, key, text in app.screen.keys}
        every = [b for _, bindings in keys.BY_SCREEN for b in bindings if isinstance(b, Binding)]
        assert {(b.key, b.description) for b in every} <= listed
        # A key bound on two screens is listed under each screen's name, never twice under one.
        rows = [(where, key) for where, key, _ in app.screen.keys]
        assert len(rows) == len(set(rows))
        named = {name for name, _ in FIGURE_HELP}
        for _, label in PATIENT_FIGURES + DOSE_FIGURES:
            assert label in named or any(label in name for name in named), label
        await pilot.press("escape")
        assert isinstance(app.screen, MainScreen)


@sync
async def test_formulary_screen_shows_the_agent_and_limit_tables(demo: Formulary) -> None:
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await pilot.press("f2")
        screen = app.screen
        assert isinstance(screen, FormularyScreen)
        assert [row[0] for row in screen.composition] == [row[0] for row in screen.stock] == [a.id for a in demo.agents]
        assert [row[0] for row in screen.limits] == [row.name for row in limit_rows(demo)]
        assert len(agent_rows(demo)) == len(demo.agents)
        await pilot.press("f2")
        assert isinstance(app.screen, MainScreen)


def is_handover_of(text: str, demo: Formulary, label: str) -> bool:
    """The handover heading (label, time, program, formulary, caution), then the report of osmodose check."""
    head, _, body = text.partition(RULE + "\n\n")
    lines = head.splitlines()
    return (
        lines[:2] == [TITLE, f"patient label: {label}"]
        and lines[2].startswith("made at: 2")
        and lines[3] == f"program: osmodose {__version__}"
        and lines[-1] == CAUTION
        and body == mannitol_summary(demo)
    )


@sync
async def test_save_writes_the_handover_summary_around_the_text_of_osmodose_check(
    tmp_path: Path, demo: Formulary
) -> None:
    target = tmp_path / "bed 4.txt"
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await fill(pilot, MANNITOL)
        await pilot.press("ctrl+s")
        assert isinstance(app.screen, SaveScreen)
        app.screen.query_one("#save-path", Input).value = str(target)
        app.screen.query_one("#save-label", Input).value = "Bed 4, AB"
        await pilot.press("enter")
        assert isinstance(app.screen, MainScreen)
        assert is_handover_of(target.read_text(encoding="utf-8"), demo, "Bed 4, AB")


@sync
async def test_a_handover_saved_without_a_label_asks_for_one_on_the_page(tmp_path: Path, demo: Formulary) -> None:
    target = tmp_path / "summary.txt"
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await fill(pilot, MANNITOL)
        await pilot.press("ctrl+s")
        app.screen.query_one("#save-path", Input).value = str(target)
        await pilot.press("enter")
    assert is_handover_of(target.read_text(encoding="utf-8"), demo, NO_LABEL)


@sync
async def test_save_into_a_missing_folder_stays_open_with_the_reason(tmp_path: Path) -> None:
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await fill(pilot, MANNITOL)
        await pilot.press("ctrl+s")
        app.screen.query_one("#save-path", Input).value = str(tmp_path / "no" / "such.txt")
        await pilot.press("enter")
        assert isinstance(app.screen, SaveScreen)
        message = app.screen.query_one("#save-message").render()
        assert str(message) == f"cannot save to {tmp_path / 'no' / 'such.txt'}: No such file or directory"
        await pilot.press("escape")
        assert isinstance(app.screen, MainScreen)


@sync
async def test_nothing_is_saved_or_copied_while_results_are_not_valid() -> None:
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await pilot.press("ctrl+s", "ctrl+y")
        assert isinstance(app.screen, MainScreen)
        assert app.clipboard == ""
        assert [n.message for n in app._notifications][-1].startswith("Nothing to save: the results are not valid")


@sync
async def test_copy_puts_the_summary_on_the_clipboard(demo: Formulary) -> None:
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await fill(pilot, MANNITOL)
        await pilot.press("ctrl+y")
        assert app.clipboard == mannitol_summary(demo)


@sync
async def test_new_case_empties_the_form_and_returns_to_weight() -> None:
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        await fill(pilot, MANNITOL)
        await pilot.press("ctrl+n")
        await pilot.pause()
        screen = main_screen(app)
        assert {k: v for k, v in screen.values().items() if v} == {"dose-mode": "dose"}
        assert screen.outcome.result is None
        assert app.focused is screen.field("weight").control


@sync
async def test_light_dark_key_switches_the_theme() -> None:
    app = make_app()
    async with app.run_test(size=SIZE) as pilot:
        assert app.current_theme.dark
        await pilot.press("ctrl+t")
        assert not app.current_theme.dark
        await pilot.press("ctrl+t")
        assert app.current_theme.dark
