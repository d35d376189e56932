"""Ask where to save a plain-text summary (or a printable record), and write it there."""

from __future__ import annotations

from pathlib import Path
from typing import ClassVar

from textual.app import ComposeResult
from textual.binding import BindingType
from textual.containers import Vertical
from textual.screen import ModalScreen
from textual.widgets import Input, Label, Static

from osmodose.app import keys

DEFAULT_NAME = "osmodose-summary.txt"


class SaveScreen(ModalScreen[str | None]):
    """Returns the path written, or None when cancelled; a write error stays on screen."""

    BINDINGS: ClassVar[list[BindingType]] = keys.SAVE

    def __init__(
        self, text: str, default_name: str = DEFAULT_NAME, what: str = "the summary (the same text as osmodose check)"
    ) -> None:
        super().__init__(id="save-screen")
        self.text = text
        self.default_name = default_name
        self.what = what

    def compose(self) -> ComposeResult:
        with Vertical(id="save-box"):
            yield Label(f"save {self.what} to:")
            yield Input(self.default_name, id="save-path")
            yield Static("enter to save, escape to cancel", id="save-message", markup=False)

    def on_input_submitted(self, event: Input.Submitted) -> None:
        event.stop()
        path = Path(event.value.strip() or self.default_name).expanduser()
        try:
            path.write_text(self.text, encoding="utf-8")
        except OSError as error:
            self.query_one("#save-message", Static).update(f"cannot save to {path}: {error.strerror or error}")
            return
        self.dismiss(str(path))

    def action_cancel(self) -> None:
        self.dismiss(None)
