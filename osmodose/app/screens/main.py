"""The check: the paper form on the left, its figures and checks on the right, recomputed on every change."""

from __future__ import annotations

from datetime import datetime
from typing import ClassVar

from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.screen import Screen
from textual.widgets import Footer, Input, Select, Static

from osmodose.app.screens.labs_file import LabsFileScreen
from osmodose.app.screens.save import SaveScreen
from osmodose.app.view import (
    AMOUNT,
    AMOUNT_HINT,
    DOSE_MODE,
    FIELDS,
    PATIENT_FIGURES,
    LoadedLabs,
    Outcome,
    evaluate,
    fill_texts,
    patient_texts,
)
from osmodose.app.widgets.dose_panel import DosePanel
from osmodose.app.widgets.figures import FigurePanel
from osmodose.app.widgets.findings import ChecksPanel, LabsFilePanel, NotesPanel
from osmodose.app.widgets.form_field import FormField
from osmodose.app.widgets.formulary_bar import FormularyBar
from osmodose.app.widgets.status_banner import StatusBanner
from osmodose.check.report import render_text
from osmodose.check.results import CAUTION
from osmodose.datain import FhirFile
from osmodose.errors import OsmodoseError
from osmodose.formulary.model import Formulary

PANELS = ("patient", "labs", "order")


class MainScreen(Screen[None]):
    """Holds the latest `Outcome`; every shown figure comes from it and nothing else."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("ctrl+s", "save", "save"),
        Binding("ctrl+y", "copy", "copy"),
        Binding("ctrl+n", "new_case", "new"),
        Binding("ctrl+l", "labs_file", "labs"),
    ]

    def __init__(self, formulary: Formulary) -> None:
        super().__init__(id="main-screen")
        self.formulary = formulary
        self.labs: LoadedLabs | None = None
        self.outcome: Outcome = evaluate({}, formulary)

    def compose(self) -> ComposeResult:
        agents = tuple((a.id, a.id) for a in self.formulary.agents)
        yield FormularyBar(self.formulary)
        yield StatusBanner()
        with Horizontal(id="body"):
            form = VerticalScroll(id="form")
            form.can_focus = False  # Tab goes straight to the first field
            with form:
                for panel in PANELS:
                    with Vertical(id=panel, classes="panel") as box:
                        box.border_title = panel
                        for spec in FIELDS:
                            if spec.panel == panel:
                                yield FormField(spec, agents if spec.key == "agent" else ())
            with VerticalScroll(id="results"):
                yield ChecksPanel()
                yield DosePanel()
                yield FigurePanel("figures", "figures", PATIENT_FIGURES)
                yield NotesPanel()
                yield LabsFilePanel()
        yield Static(CAUTION, id="caution", markup=False)
        yield Footer()

    def on_mount(self) -> None:
        self.recompute()
        self.field("weight").control.focus()

    def field(self, key: str) -> FormField:
        return self.query_one(f"#field-{key}", FormField)

    def values(self) -> dict[str, str]:
        return {f.spec.key: f.value for f in self.query(FormField)}

    def on_input_changed(self, event: Input.Changed) -> None:
        event.stop()
        self.recompute()

    def on_select_changed(self, event: Select.Changed) -> None:
        event.stop()
        if event.select.id == f"in-{DOSE_MODE}":
            mode = self.field(DOSE_MODE).value or "dose"
            self.field(AMOUNT).query_one(Input).placeholder = AMOUNT_HINT[mode]
        self.recompute()

    def on_input_submitted(self, event: Input.Submitted) -> None:
        event.stop()
        self.focus_next()

    def recompute(self) -> None:
        """Evaluate the whole form and replace every shown figure (or blank them all)."""
        outcome = evaluate(self.values(), self.formulary, self.labs)
        self.outcome = outcome
        for f in self.query(FormField):
            if f.spec.key == outcome.field:
                f.mark(("… needed: " if outcome.missing else "✖ ") + str(outcome.error), bad=not outcome.missing)
            else:
                f.mark("", bad=False)
        self.query_one(StatusBanner).show(outcome)
        result = outcome.result
        self.query_one("#figures", FigurePanel).show(patient_texts(result) if result else None)
        self.query_one(DosePanel).show_outcome(outcome)
        self.query_one(ChecksPanel).show(outcome)
        self.query_one(NotesPanel).show(outcome)
        self.query_one(LabsFilePanel).show(outcome)
        results = self.query_one("#results")
        for state in ("ok", "warn", "refuse", "invalid", "incomplete"):
            results.set_class(outcome.state == state, f"-{state}")

    def _summary(self) -> str | None:
        if self.outcome.result is None:
            self.notify(f"Nothing to save: the results are not valid ({self.outcome.error}).", severity="error")
            return None
        return render_text(self.outcome.result)

    def action_save(self) -> None:
        text = self._summary()
        if text is not None:
            self.app.push_screen(SaveScreen(text), self._saved)

    def _saved(self, path: str | None) -> None:
        if path:
            self.notify(f"Summary saved to {path}.")

    def action_copy(self) -> None:
        text = self._summary()
        if text is not None:
            self.app.copy_to_clipboard(text)
            self.notify("Summary copied to the terminal's clipboard (where the terminal allows it).")

    def action_new_case(self) -> None:
        self.labs = None
        for f in self.query(FormField):
            f.reset()
        self.recompute()
        self.field("weight").control.focus()

    def action_labs_file(self) -> None:
        self.app.push_screen(LabsFileScreen(), self._labs_read)

    def _labs_read(self, file: FhirFile | None) -> None:
        """Fill the empty boxes from the file (typed ones stay, and win), then recompute."""
        if file is None:
            return
        try:
            texts = fill_texts(file, self.values(), datetime.now().astimezone())
        except OsmodoseError as error:
            self.notify(str(error), severity="error", timeout=15)
            return
        for key, text in texts.items():
            self.field(key).set_value(text)
        self.labs = LoadedLabs(file, texts)
        self.recompute()
        self.notify(f"Labs read from {file.path}: {len(texts)} boxes filled; typed values kept.")
