"""Ask before replacing a file: yes or no, and nothing is replaced on no, escape, or a stray key."""

from __future__ import annotations

from typing import ClassVar

from textual.app import ComposeResult
from textual.binding import BindingType
from textual.containers import Vertical
from textual.screen import ModalScreen
from textual.widgets import Label, Static

from osmodose.app import keys

CONFIRM_HINT = "y: replace it · n or escape: keep it"


class ConfirmReplace(ModalScreen[bool]):
    """Returns True only when the user presses y."""

    BINDINGS: ClassVar[list[BindingType]] = keys.CONFIRM

    def __init__(self, question: str) -> None:
        super().__init__(id="confirm-screen")
        self.question = question

    def compose(self) -> ComposeResult:
        with Vertical(id="confirm-box"):
            yield Static(self.question, id="confirm-question", markup=False)
            yield Label(CONFIRM_HINT, id="confirm-hint")

    def action_answer(self, yes: bool) -> None:
        self.dismiss(yes)
