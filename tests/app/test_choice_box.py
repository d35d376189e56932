"""The choice box works as a Select did: keys open its list, typing jumps, enter takes, escape leaves it as it was."""

from __future__ import annotations

import pytest
from textual.app import App, ComposeResult
from textual.widgets import Input

from osmodose.app.widgets.choice_box import ChoiceBox, ChoiceList
from tests.app.driving import MANNITOL, fill, main_screen, make_app, sync

#: Shown names chosen so that typing finds by the soonest place in a name, not only by its start.
CHOICES = (("nacl-3 · Sodium chloride 3 %", "nacl-3"), ("mannitol-20 · Mannitol 20 %", "mannitol-20"),
           ("glucose-5 · Glucose 5 %", "glucose-5"))  # fmt: skip


class Two(App[None]):
    """A choice box between two typed boxes."""

    def __init__(self, allow_blank: bool = True) -> None:
        super().__init__()
        self.allow_blank = allow_blank
        self.changes: list[str] = []

    def compose(self) -> ComposeResult:
        yield Input(id="before")
        yield ChoiceBox(CHOICES, prompt="no order", allow_blank=self.allow_blank, id="box")
        yield Input(id="after")

    def on_choice_box_changed(self, event: ChoiceBox.Changed) -> None:
        self.changes.append(event.value)


def box(app: App[None]) -> ChoiceBox:
    return app.query_one("#box", ChoiceBox)


@sync
async def test_enter_opens_the_list_typing_jumps_and_enter_takes_the_option() -> None:
    app = Two()
    async with app.run_test() as pilot:
        box(app).focus()
        await pilot.press("enter")
        assert box(app).opened and isinstance(app.focused, ChoiceList)
        await pilot.press("g", "l", "enter")
        await pilot.pause()
        assert box(app).value == "glucose-5" and app.changes == ["glucose-5"]
        assert not box(app).opened and app.focused is box(app)


@pytest.mark.parametrize("key", ["space", "down", "up"])
@sync
async def test_space_and_the_arrows_open_the_list_too(key: str) -> None:
    app = Two()
    async with app.run_test() as pilot:
        box(app).focus()
        await pilot.press(key)
        assert box(app).opened


@sync
async def test_typing_finds_the_option_holding_the_letters_soonest() -> None:
    """ "chl" is in nacl-3's name only; "20" is at 9 in mannitol-20's name and nowhere in the others."""
    app = Two()
    async with app.run_test() as pilot:
        box(app).focus()
        await pilot.press("enter", "2", "0", "enter")
        assert box(app).value == "mannitol-20"
        await pilot.press("enter", "c", "h", "l", "enter")
        assert box(app).value == "nacl-3"


@sync
async def test_escape_closes_the_list_and_keeps_the_value() -> None:
    app = Two()
    async with app.run_test() as pilot:
        box(app).value = "nacl-3"
        box(app).focus()
        await pilot.press("enter", "down", "escape")
        await pilot.pause()
        assert box(app).value == "nacl-3" and not box(app).opened and app.focused is box(app)


@sync
async def test_tab_away_from_the_open_list_closes_it_unchanged() -> None:
    app = Two()
    async with app.run_test() as pilot:
        box(app).focus()
        await pilot.press("enter", "down", "tab")
        await pilot.pause()
        assert box(app).value == "" and not box(app).opened and app.focused is not box(app).list


@sync
async def test_a_click_opens_the_list_and_a_click_on_an_option_takes_it() -> None:
    app = Two()
    async with app.run_test() as pilot:
        await pilot.click("#box")
        await pilot.pause()
        assert box(app).opened
        assert box(app).list is not None
        await pilot.click(ChoiceList, offset=(2, 2))  # the second option (the border takes the first row)
        await pilot.pause()
        assert box(app).value == "mannitol-20" and not box(app).opened


@sync
async def test_the_list_shows_whole_names_wider_than_the_box() -> None:
    app = Two()
    async with app.run_test(size=(80, 24)) as pilot:
        box(app).styles.width = 12
        box(app).focus()
        await pilot.press("enter")
        await pilot.pause()
        assert box(app).list is not None
        assert box(app).list.size.width >= max(len(shown) for shown, _ in CHOICES)


@sync
async def test_a_value_not_among_the_choices_is_refused() -> None:
    app = Two(allow_blank=False)
    async with app.run_test():
        assert box(app).value == "nacl-3"  # no blank: the first choice
        with pytest.raises(ValueError, match="not a choice"):
            box(app).value = "nacl-9"
        with pytest.raises(ValueError, match="not a choice"):
            box(app).value = ""


@sync
async def test_new_choices_keep_the_value_when_it_is_still_offered() -> None:
    app = Two()
    async with app.run_test():
        box(app).value = "mannitol-20"
        box(app).set_choices(CHOICES[1:])
        assert box(app).value == "mannitol-20"
        box(app).set_choices(CHOICES[:1])
        assert box(app).value == ""


@sync
async def test_the_check_screen_opens_on_a_choice_and_judges_the_pick() -> None:
    """The agent picked from its list on the check screen is the one the figures are for."""
    app = make_app()
    async with app.run_test(size=(80, 24)) as pilot:
        await fill(pilot, {k: v for k, v in MANNITOL.items() if k != "agent"})
        screen = main_screen(app)
        agent = screen.field("agent").control
        agent.focus()
        await pilot.press("enter", "m", "a", "n", "enter")
        await pilot.pause()
        assert screen.field("agent").value == "mannitol-20"
        assert screen.shown.state == "ok"
