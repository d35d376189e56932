"""Ask where to save a plain-text summary (or a printable record); write it there, never over a file unasked."""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path
from typing import ClassVar

from textual.app import ComposeResult
from textual.binding import BindingType
from textual.containers import Vertical
from textual.screen import ModalScreen
from textual.widgets import Input, Label, Static

from osmodose.app import keys
from osmodose.app.screens.confirm import ConfirmReplace
from osmodose.safe_text import escape_controls
from osmodose.storage.atomic import DestinationIsALink, atomic_write, write_problem

DEFAULT_NAME = "osmodose-summary.txt"


class SaveScreen(ModalScreen[str | None]):
    """Returns the path written, or None when cancelled; a write error stays on screen.

    The file is written with `atomic_write`: an existing file (a verification
    log, another summary) is replaced only after the user says yes in a
    confirm dialog, and a symbolic link is never written through.

    `text` may be a function of the patient label: the box then asks for the
    label too (a handover page must say whose it is), and the text is made
    with it when the user saves.
    """

    BINDINGS: ClassVar[list[BindingType]] = keys.SAVE

    def __init__(
        self,
        text: str | Callable[[str], str],
        default_name: str = DEFAULT_NAME,
        what: str = "the summary (the same text as osmodose check)",
        noun: str = "summary",
    ) -> None:
        super().__init__(id="save-screen")
        self.text = text
        self.default_name = default_name
        self.what = what
        self.noun = noun

    def compose(self) -> ComposeResult:
        with Vertical(id="save-box"):
            yield Label(f"save {self.what} to:")
            yield Input(self.default_name, id="save-path")
            if callable(self.text):
                yield Label("patient label (bed, initials; printed at the top of the page):")
                yield Input("", placeholder="e.g. Bed 4, AB", id="save-label")
            yield Static("enter to save, escape to cancel", id="save-message", markup=False)

    def on_input_submitted(self, event: Input.Submitted) -> None:
        """Enter in either box saves."""
        event.stop()
        typed = self.query_one("#save-path", Input).value.strip()
        self._write(Path(typed or self.default_name).expanduser(), overwrite=False)

    def contents(self) -> str:
        """The text to write, made with the typed patient label when the text takes one."""
        if callable(self.text):
            return self.text(self.query_one("#save-label", Input).value)
        return self.text

    def _write(self, path: Path, overwrite: bool) -> None:
        try:
            atomic_write(path, self.contents(), overwrite=overwrite)
        except FileExistsError:
            question = escape_controls(f"{path} already exists. Replace it with this {self.noun}? Its content is lost.")
            self.app.push_screen(ConfirmReplace(question), lambda yes: self._answered(path, bool(yes)))
            return
        except DestinationIsALink:
            self._say(f"cannot save to {path}: it is a symbolic link (osmodose never writes through or over one)")
            return
        except OSError as error:
            self._say(f"cannot save to {path}: {write_problem(error)}")
            return
        self.dismiss(str(path))

    def _answered(self, path: Path, yes: bool) -> None:
        if yes:
            self._write(path, overwrite=True)
        else:
            self._say(f"not saved: {path} was kept as it is; give another name, or escape")

    def _say(self, text: str) -> None:
        self.query_one("#save-message", Static).update(escape_controls(text))

    def action_cancel(self) -> None:
        self.dismiss(None)
