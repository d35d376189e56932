"""The first frame is the whole form with its keys; the formulary is read only once it is painted."""

from __future__ import annotations

import threading

import pytest
from rich.console import RenderableType
from textual.screen import Screen
from textual.widgets._footer import FooterKey

from osmodose.app.app import OsmodoseApp
from osmodose.app.loading import Loaded, load_files
from osmodose.app.screens.main import MainScreen
from osmodose.app.widgets.choice_box import ChoiceList
from tests.app.driving import sync


def shown_keys(app: OsmodoseApp) -> list[tuple[str, bool]]:
    """(key, dimmed) of each key in the footer, left to right."""
    return [(key.key, key.has_class("-disabled")) for key in app.screen.query(FooterKey)]


@sync
async def test_the_keys_are_in_the_first_frame_and_the_formulary_is_read_after_it(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    release = threading.Event()
    frames: list[object] = []
    frames_before_loading: list[int] = []
    display = OsmodoseApp._display

    def counted(self: OsmodoseApp, screen: Screen[object], renderable: RenderableType | None) -> None:
        if renderable is not None:
            frames.append(renderable)
        display(self, screen, renderable)

    monkeypatch.setattr(OsmodoseApp, "_display", counted)

    def load() -> Loaded:
        frames_before_loading.append(len(frames))
        release.wait(timeout=30)
        return load_files(None)

    app = OsmodoseApp(load=load, loading="reading the demo formulary", demo=True)
    async with app.run_test(size=(80, 24)) as pilot:
        screen = app.screen
        assert isinstance(screen, MainScreen)
        # Composed with the screen: no second round after the first refresh.
        assert [key for key, _ in shown_keys(app)][:5] == ["ctrl+s", "ctrl+y", "ctrl+n", "ctrl+l", "ctrl+q"]
        await pilot.pause()
        assert len(frames_before_loading) == 1 and frames_before_loading[0] >= 1  # started once a frame was painted
        keys = list(screen.query(FooterKey))
        assert dict(shown_keys(app))["f1"]  # help needs the formulary: dimmed while it is read
        release.set()
        while app.formulary is None:
            await pilot.pause(0.01)
        await pilot.pause()
        assert not dict(shown_keys(app))["f1"]
        assert list(screen.query(FooterKey)) == keys  # undimmed in place, not rebuilt


@sync
async def test_the_footer_shows_the_keys_of_an_open_choice_list_and_back() -> None:
    app = OsmodoseApp(load=lambda: load_files(None), loading="reading the demo formulary", demo=True)
    async with app.run_test(size=(80, 24)) as pilot:
        while app.formulary is None:
            await pilot.pause(0.01)
        screen = app.screen
        assert isinstance(screen, MainScreen)
        before = [key for key, _ in shown_keys(app)]
        screen.field("sex").control.focus()
        await pilot.press("enter")
        await pilot.pause()
        assert isinstance(app.focused, ChoiceList)
        assert "escape" in [key for key, _ in shown_keys(app)]  # close the list
        await pilot.press("escape")
        await pilot.pause()
        assert [key for key, _ in shown_keys(app)] == before
