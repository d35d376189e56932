"""Drive the real app as a user does: focus a field, type, open a choice list and pick."""

from __future__ import annotations

import asyncio
import functools
from collections.abc import Callable, Coroutine
from typing import Any, NamedTuple

from textual import events
from textual.pilot import Pilot
from textual.widgets import Input

from osmodose.app.app import OsmodoseApp
from osmodose.app.form_view import FIELDS
from osmodose.app.screens.main import MainScreen
from osmodose.app.widgets.form_field import FormField
from osmodose.formulary import demo_formulary_path, load_formulary

# Invented patients for the app tests (demo data only).
MANNITOL = {
    "weight": "70",
    "age": "45",
    "sex": "male",
    "sodium": "141",
    "glucose": "6",
    "urea": "5",
    "osmolality": "300",
    "agent": "mannitol-20",
    "amount": "1 g/kg",
    "duration": "20",
}
SALINE = {
    "weight": "154 lb",
    "age": "45",
    "sex": "male",
    "sodium": "128",
    "potassium": "4",
    "glucose": "108 mg/dL",
    "bun": "14",
    "osmolality": "270",
    "agent": "nacl-3",
    "dose-mode": "target-rise",
    "amount": "6",
    "duration": "2 h",
    "line": "peripheral",
}
REFUSE = {**MANNITOL, "osmolality": "325"}
#: The same cases as `osmodose check` options (the form's amount is --dose / --target-rise).
MANNITOL_ARGS = ["--weight", "70", "--age", "45", "--sex", "male", "--sodium", "141", "--glucose", "6", "--urea", "5",
                 "--osmolality", "300", "--agent", "mannitol-20", "--dose", "1 g/kg", "--duration", "20"]  # fmt: skip
SALINE_ARGS = ["--weight", "154 lb", "--age", "45", "--sex", "male", "--sodium", "128", "--potassium", "4",
               "--glucose", "108 mg/dL", "--bun", "14", "--osmolality", "270", "--agent", "nacl-3",
               "--target-rise", "6", "--duration", "2 h", "--line", "peripheral"]  # fmt: skip


def make_app(theme: str = "textual-dark") -> OsmodoseApp:
    return OsmodoseApp(load_formulary(demo_formulary_path()), theme=theme)


def main_screen(app: OsmodoseApp) -> MainScreen:
    screen = app.screen
    assert isinstance(screen, MainScreen)
    return screen


async def type_in_form_order(pilot: Pilot, fields: dict[str, str]) -> None:
    """Fill the form with the keyboard only, from the first field on, Tab by Tab.

    Slow (a key press at a time): ONE test types a whole case this way; the others use `fill`.

    Typed fields get each character as a key press; a choice is opened with
    enter, found by typing the fewest letters of its shown name and taken with enter.
    Fields not in `fields` are passed over with Tab, as a user would.
    """
    screen = main_screen(pilot.app)  # type: ignore[arg-type]
    assert pilot.app.focused is screen.field(FIELDS[0].key).control
    for spec in FIELDS:
        field = screen.field(spec.key)
        assert pilot.app.focused is field.control, f"Tab should have reached {spec.key}"
        text = fields.get(spec.key)
        if text is not None and isinstance(field.control, Input):
            await pilot.press(*text)
        elif text is not None:
            await pilot.press("enter", *_shortest_prefix(field.choices, text), "enter")
        assert field.value == (text or field.value), f"{spec.key}: typed {text!r}, field holds {field.value!r}"
        await pilot.press("tab")


def _shortest_prefix(choices: tuple[tuple[str, str], ...], value: str) -> str:
    """The fewest letters of a choice's shown name that find it and nothing else."""
    shown = next(label for label, v in choices if v == value)
    others = [label for label, v in choices if v != value]
    for n in range(1, len(shown) + 1):
        if not any(label.startswith(shown[:n]) for label in others):
            return shown[:n]
    return shown


async def fill(pilot: Pilot, fields: dict[str, str]) -> None:
    """Put each value in its field at once (the same Changed message typing sends), then let it settle."""
    await pilot.pause()  # the screen is composed before the first value goes in
    screen = main_screen(pilot.app)  # type: ignore[arg-type]
    for key, text in fields.items():
        screen.field(key).control.value = text
    await pilot.pause()
    for key, text in fields.items():
        assert screen.field(key).value == text, key


def sync(test: Callable[..., Coroutine[Any, Any, None]]) -> Callable[..., None]:
    """Run an async test body with asyncio (no async plugin is installed); fixtures pass through."""

    @functools.wraps(test)
    def run(*args: Any, **kwargs: Any) -> None:
        asyncio.run(test(*args, **kwargs))

    return run


# The verification screen's cases: an invented 70 kg man, the patient typed on the check screen.
VERIFY_PATIENT = {"weight": "70", "age": "45", "sex": "male", "sodium": "141", "glucose": "6", "urea": "5"}
VERIFY_PATIENT_ARGS = ["--weight", "70", "--age", "45", "--sex", "male", "--sodium", "141", "--glucose", "6",
                       "--urea", "5"]  # fmt: skip
#: Mannitol 20 % 3500 mL written for "1 g/kg" in 70 kg: 70 g is 350 mL, so a 10-fold volume.
TEN_FOLD_MANNITOL = {"agent": "mannitol-20", "volume": "3500", "stated-dose": "1 g/kg"}
#: 3 % saline 250 mL over an hour through a peripheral line (a peripheral-osmolarity warning).
PERIPHERAL_SALINE = {"agent": "nacl-3", "volume": "250", "duration": "60", "line": "peripheral"}
PERIPHERAL_SALINE_ARGS = ["--agent", "nacl-3", "--volume", "250", "--duration", "60", "--line", "peripheral"]
VEIN_REASON = "large forearm vein, 1 h only, site checked"


PASTE_FROM = 8


async def type_into(pilot: Pilot, key: str, text: str) -> None:
    """Focus a box of the current screen and type `text` key by key (a choice: open, type its start, enter).

    `key` is a form field's key, or the id of a plain typed box (a reason beside an accept box).
    Text longer than a few characters arrives as a terminal paste (one event), to keep the tests fast.
    """
    field = pilot.app.screen.query_one_optional(f"#field-{key}", FormField)
    control = field.control if field else pilot.app.screen.query_one(f"#{key}", Input)
    control.focus()
    await pilot.pause()
    if isinstance(control, Input) and len(text) > PASTE_FROM:
        control.post_message(events.Paste(text))
    elif isinstance(control, Input):
        await pilot.press(*text)
    else:
        await pilot.press("enter", *_shortest_prefix(field.choices, text), "enter")  # type: ignore[union-attr]
    await pilot.pause()
    assert control.value == text, f"{key}: typed {text!r}, box holds {control.value!r}"


async def tick(pilot: Pilot, code: str) -> None:
    """Tick the accept box of a warning with the keyboard."""
    pilot.app.screen.query_one(f"#accept-{code}").focus()
    await pilot.press("space")
    await pilot.pause()


async def open_verification(
    pilot: Pilot, patient: dict[str, str], order: dict[str, str], initials: str = "", typed: bool = False
) -> None:
    """The patient on the check screen, F3, then the order as written typed into the verification screen.

    With `typed` False each box gets its value at once (the same Changed message typing sends): faster,
    for tests about something else than typing (the default for every test but one: see `type_into`).
    """
    await fill(pilot, patient)
    await pilot.press("f3")
    await pilot.pause()
    boxes = {**order, "initials": initials} if initials else dict(order)
    for key, text in boxes.items():
        if typed:
            await type_into(pilot, key, text)
        else:
            pilot.app.screen.query_one(f"#field-{key}", FormField).control.value = text
    await pilot.pause()


class Started(NamedTuple):
    app: OsmodoseApp
    main: MainScreen
    """The check screen it opened on (kept: the app's screen stack is empty once it has ended)."""


def run_headless(app: OsmodoseApp, seen: list[Started]) -> None:
    """Stand-in for `OsmodoseApp.run` in tests: the app headless until its files are read, then quit.

    A file that cannot be used ends the app by itself (its `load_error`); a
    good one is quit once loaded, as a user would.
    """

    async def go() -> None:
        async with app.run_test(size=(80, 24)) as pilot:
            seen.append(Started(app, main_screen(app)))
            while app.formulary is None and app.load_error is None:
                await pilot.pause(0.01)
            if app.load_error is None:
                await pilot.pause()
                app.exit()

    asyncio.run(go())
