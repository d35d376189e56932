"""Help: every key the app answers to, and one line per figure with its formula."""

from __future__ import annotations

from typing import ClassVar

from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Horizontal, VerticalScroll
from textual.screen import Screen
from textual.widgets import Footer, Label, Static

from osmodose.app.help_text import FIGURE_HELP, FORM_KEYS
from osmodose.app.widgets.formulary_bar import FormularyBar
from osmodose.check.results import CAUTION
from osmodose.formulary.model import Formulary


def key_rows(key_lists: list[list[BindingType]]) -> list[tuple[str, str]]:
    """(key, what it does) for every binding given, then the form's own keys."""
    bound = [(b.key, b.description) for bindings in key_lists for b in bindings if isinstance(b, Binding)]
    return bound + list(FORM_KEYS)


class HelpScreen(Screen[None]):
    """Built from the live binding lists, so it cannot drift from the footer."""

    BINDINGS: ClassVar[list[BindingType]] = [Binding("escape", "app.pop_screen", "back")]

    def __init__(self, formulary: Formulary, key_lists: list[list[BindingType]]) -> None:
        super().__init__(id="help-screen")
        self.formulary = formulary
        self.keys = key_rows(key_lists)

    def compose(self) -> ComposeResult:
        yield FormularyBar(self.formulary)
        with VerticalScroll(id="help-body"):
            yield Static("keys", classes="help-title")
            for key, text in self.keys:
                yield _row(key, text)
            yield Static("figures", classes="help-title")
            for name, formula in FIGURE_HELP:
                yield _row(name, formula)
            yield Static(CAUTION, classes="caution", markup=False)
        yield Footer()


def _row(left: str, right: str) -> Horizontal:
    return Horizontal(
        Label(left, classes="help-key", markup=False),
        Static(right, classes="help-text", markup=False),
        classes="help-row",
    )
