"""The status line: ok, warn, refuse (or not valid, loading) by word, symbol and colour at once."""

from __future__ import annotations

from textual.widgets import Static

from osmodose.app.widgets.lines import set_text

STATES = ("ok", "warn", "refuse", "invalid", "incomplete", "loading")


class StatusBanner(Static):
    """Coloured by state through CSS classes; the word and symbol carry it without colour."""

    def __init__(self, banner_id: str = "status", text: str = "", state: str = "") -> None:
        super().__init__(text, id=banner_id, classes=f"status -{state}" if state else "status", markup=False)
        self.text = text

    def show(self, text: str, state: str) -> None:
        if set_text(self, text, self.text):
            self.text = text
        self.update_classes({f"-{name}": state == name for name in STATES})
