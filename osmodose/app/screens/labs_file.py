"""Ask for a labs file (HL7 FHIR R4 JSON or NDJSON) and read it; a file that cannot be used is named here."""

from __future__ import annotations

from pathlib import Path
from typing import ClassVar

from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Vertical
from textual.screen import ModalScreen
from textual.widgets import Input, Label, Static

from osmodose.datain import FhirFile, read_labs_file
from osmodose.errors import OsmodoseError


class LabsFileScreen(ModalScreen[FhirFile | None]):
    """Returns the file read, or None when cancelled; a problem with the file is shown under the box."""

    BINDINGS: ClassVar[list[BindingType]] = [Binding("escape", "cancel", "cancel")]

    def __init__(self) -> None:
        super().__init__(id="labs-file-screen")

    def compose(self) -> ComposeResult:
        with Vertical(id="labs-file-box"):
            yield Label("read labs from an HL7 FHIR R4 file (Bundle, Observation or NDJSON):")
            yield Input("", placeholder="labs.json", id="labs-file-path")
            yield Static(
                "values already typed are kept; empty boxes are filled from the file. enter to read, escape to cancel",
                id="labs-file-message",
                markup=False,
            )

    def on_input_submitted(self, event: Input.Submitted) -> None:
        event.stop()
        text = event.value.strip()
        if not text:
            return
        try:
            file = read_labs_file(Path(text).expanduser())
        except OsmodoseError as error:
            self.query_one("#labs-file-message", Static).update(str(error))
            return
        self.dismiss(file)

    def action_cancel(self) -> None:
        self.dismiss(None)
