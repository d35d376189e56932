"""The status line: ok, warn, refuse (or not valid) by word, symbol and colour at once."""

from __future__ import annotations

from textual.widgets import Static

from osmodose.app.view import Outcome, banner_text

STATES = ("ok", "warn", "refuse", "invalid", "incomplete")


class StatusBanner(Static):
    """Coloured by state through CSS classes; the word and symbol carry it without colour."""

    def __init__(self) -> None:
        super().__init__("", id="status", markup=False)
        self.text = ""

    def show(self, outcome: Outcome) -> None:
        text = banner_text(outcome)
        if text != self.text:
            self.text = text
            self.update(text)
        for state in STATES:
            self.set_class(state == outcome.state, f"-{state}")
