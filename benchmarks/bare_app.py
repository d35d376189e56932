"""The floor the app's benchmarks compare with: a bare Textual app with a Header, an Input and a Footer.

    python benchmarks/bare_app.py

It imports textual and nothing of osmodose; `first_frame.py` times it under
tmux and `keystroke.py` drives it headless, beside the real app, in the same run.
"""

from __future__ import annotations

from typing import ClassVar

from textual.app import App, ComposeResult
from textual.binding import Binding, BindingType
from textual.widgets import Footer, Header, Input

#: What the first frame shows once it is painted (the footer's key).
READY_TEXT = "quit"


class BareApp(App[None]):
    """A Header, an Input (focused, so typing works at once) and a Footer."""

    BINDINGS: ClassVar[list[BindingType]] = [Binding("ctrl+q", "quit", "quit")]

    def compose(self) -> ComposeResult:
        yield Header()
        yield Input(placeholder="type here", id="bare-input")
        yield Footer()

    def on_mount(self) -> None:
        self.query_one(Input).focus()


if __name__ == "__main__":
    BareApp().run()
