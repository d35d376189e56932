"""Ask where to save the plain-text summary, and write it there."""

from __future__ import annotations

from pathlib import Path
from typing import ClassVar

from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Vertical
from textual.screen import ModalScreen
from textual.widgets import Input, Label, Static

DEFAULT_NAME = "osmodose-summary.txt"


class SaveScreen(ModalScreen[str | None]):
    """Returns the path written, or None when cancelled; a write error stays on screen."""

    BINDINGS: ClassVar[list[BindingType]] = [Binding("escape", "cancel", "cancel")]

    def __init__(self, text: str) -> None:
        super().__init__(id="save-screen")
        self.text = text

    def compose(self) -> ComposeResult:
        with Vertical(id="save-box"):
            yield Label("save the summary (the same text as osmodose check) to:")
            yield Input(DEFAULT_NAME, id="save-path")
            yield Static("enter to save, escape to cancel", id="save-message", markup=False)

    def on_input_submitted(self, event: Input.Submitted) -> None:
        event.stop()
        path = Path(event.value.strip() or DEFAULT_NAME).expanduser()
        try:
            path.write_text(self.text, encoding="utf-8")
        except OSError as error:
            self.query_one("#save-message", Static).update(f"cannot save to {path}: {error.strerror or error}")
            return
        self.dismiss(str(path))

    def action_cancel(self) -> None:
        self.dismiss(None)
