"""The verification: the order as written on the left, its re-check and the decision on the right, saved to the log.

The patient and labs come from the check screen (read-only here); every
figure, finding and decision comes from `osmodose.app.verify_view.evaluate`,
which calls the same core as `osmodose verify`.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import ClassVar

from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.markup import escape
from textual.screen import Screen
from textual.widgets import Checkbox, Footer, Input, Select, Static

from osmodose.app.verify_view import (
    INITIALS_SPEC,
    ORDER_SPECS,
    PATIENT,
    Entry,
    SaveNote,
    VerifyState,
    box_message,
    decision_text,
    discrepancy_rows,
    evaluate,
    not_saved_text,
    patient_fields,
    patient_summary,
    problem_text,
    saved_text,
    worst,
)
from osmodose.app.view import DOSE_FIGURES, Outcome, dose_texts
from osmodose.app.widgets.accept_panel import AcceptPanel
from osmodose.app.widgets.figures import FigurePanel
from osmodose.app.widgets.findings import ChecksPanel
from osmodose.app.widgets.form_field import FormField
from osmodose.app.widgets.formulary_bar import FormularyBar
from osmodose.check.results import CAUTION
from osmodose.errors import LogError, SigningKeyError
from osmodose.formulary.model import Formulary
from osmodose.verify import append_record, log_path

STATES = ("ok", "warn", "refuse", "invalid", "incomplete")
_STYLE = {"warn": "bold $text-warning", "refuse": "bold $text-error"}
NOT_SAVED_YET = "not saved yet: ctrl+s appends this record to the verification log"


class VerifyScreen(Screen[None]):
    """Keeps what was typed while the user goes back to the check screen (it is installed, not rebuilt)."""

    BINDINGS: ClassVar[list[BindingType]] = [
        Binding("ctrl+s", "save", "save"),
        Binding("escape", "back", "back"),
    ]

    def __init__(self, formulary: Formulary, check_values: Callable[[], dict[str, str]]) -> None:
        super().__init__(id="verify-screen")
        self.formulary = formulary
        self.check_values = check_values
        self.ticks: dict[str, bool] = {}
        self.reasons: dict[str, str] = {}
        self.verification: VerifyState | None = None
        self.note: SaveNote | None = None
        self.shown: dict[str, str] = {}
        self.generation = 0

    def compose(self) -> ComposeResult:
        agents = tuple((a.id, a.id) for a in self.formulary.agents)
        yield FormularyBar(self.formulary)
        yield Static("", id="verify-status", markup=False)
        yield Static(NOT_SAVED_YET, id="verify-saved", markup=False)
        with Horizontal(id="verify-body"):
            form = VerticalScroll(id="verify-form")
            form.can_focus = False
            with form:
                with Vertical(id="verify-patient", classes="panel") as box:
                    box.border_title = "patient & labs"
                    yield Static("", id="patient-typed", markup=False)
                    yield Static("", id="patient-error", markup=False)
                    yield Static("typed on the check screen: escape to change", classes="hint", markup=False)
                with Vertical(id="verify-order", classes="panel") as box:
                    box.border_title = "order as written"
                    for spec in ORDER_SPECS:
                        yield FormField(spec, agents if spec.key == "agent" else ())
                with Vertical(id="verify-verifier", classes="panel") as box:
                    box.border_title = "verifier"
                    yield FormField(INITIALS_SPEC)
            with VerticalScroll(id="verify-results"):
                discrepancies = Static("", id="discrepancies", classes="panel")
                discrepancies.border_title = "as written vs recomputed"
                yield discrepancies
                yield ChecksPanel()
                yield AcceptPanel()
                yield FigurePanel("recomputed", "recomputed from the volume", DOSE_FIGURES)
        yield Static(CAUTION, id="caution", markup=False)
        yield Footer()

    async def on_mount(self) -> None:
        await self.recompute()
        self.query_one("#in-agent").focus()

    async def on_screen_resume(self) -> None:
        await self.recompute()  # the patient or labs may have changed on the check screen

    def field_value(self, key: str) -> str:
        return self.query_one(f"#field-{key}", FormField).value

    def entry(self) -> Entry:
        fields = {f.spec.key: f.value for f in self.query(FormField)}
        initials = fields.pop(INITIALS_SPEC.key, "")
        return Entry(patient_fields(self.check_values()), fields, dict(self.ticks), dict(self.reasons), initials)

    async def on_input_changed(self, event: Input.Changed) -> None:
        event.stop()
        if event.input.id and event.input.id.startswith("reason-"):
            self.reasons[event.input.id.removeprefix("reason-")] = event.value
        await self.recompute()

    async def on_checkbox_changed(self, event: Checkbox.Changed) -> None:
        event.stop()
        if event.checkbox.id:
            self.ticks[event.checkbox.id.removeprefix("accept-")] = event.value
        await self.recompute()

    async def on_select_changed(self, event: Select.Changed) -> None:
        event.stop()
        await self.recompute()

    def on_input_submitted(self, event: Input.Submitted) -> None:
        event.stop()
        self.focus_next()

    async def recompute(self) -> None:
        """Evaluate every box and replace everything shown (or blank it)."""
        entry = self.entry()
        state = evaluate(entry, self.formulary)
        self.generation += 1
        generation = self.generation
        accept = self.query_one(AcceptPanel)
        await accept.show(state.acceptable, state.refusals, self.ticks, self.reasons)
        if generation != self.generation:
            return  # a newer evaluation started while the boxes were rebuilt: it shows everything
        self.verification = state
        status = self._show("verify-status", decision_text(state))
        for name in STATES:
            status.set_class(state.state == name, f"-{name}")
        self._show("patient-typed", patient_summary(entry.patient))
        self._show("patient-error", box_message(state, PATIENT)).display = state.field == PATIENT
        for f in self.query(FormField):
            message = box_message(state, f.spec.key)
            f.mark(message, bad=bool(message) and not state.missing)
        preview = state.preview
        self._show("discrepancies", self._discrepancies(state))
        self.query_one(ChecksPanel).show(Outcome(preview.result if preview else None, state.error))
        accept.mark(state.field or "", box_message(state, state.field or ""), bad=not state.missing)
        self.query_one("#recomputed", FigurePanel).show(dose_texts(preview.result) if preview else None)
        borders = {
            "discrepancies": [d.severity for d in preview.discrepancies] if preview else [],
            "checks": [x.severity for x in preview.result.findings] if preview else [],
            "accept": ["refuse"] * len(state.refusals) + ["warn"] * len(state.acceptable),
        }
        for panel_id, severities in borders.items():
            panel = self.query_one(f"#{panel_id}")
            for name in ("warn", "refuse"):
                panel.set_class(worst(severities) == name, f"-{name}")
        self._show_note(entry)

    def _show(self, static_id: str, text: str) -> Static:
        """Replace a line's text only when it changed (an update re-lays the screen out)."""
        box = self.query_one(f"#{static_id}", Static)
        if self.shown.get(static_id) != text:
            self.shown[static_id] = text
            box.update(text)
        return box

    @staticmethod
    def _discrepancies(state: VerifyState) -> str:
        if state.preview is None:
            return "[$text-muted]not valid: nothing to compare until the order reads[/]"
        rows = discrepancy_rows(state.preview.discrepancies)
        if not rows:
            return "[$text-success]✔ none: the order as written agrees with the recomputation[/]"
        return "\n".join(
            f"[{_STYLE[severity]}]{escape(heading)}[/]\n"
            + (f"[bold]{escape(side)}[/]\n" if side else "")
            + f"[$text-muted]{escape(message)}[/]"
            for severity, heading, side, message in rows
        )

    def _show_note(self, entry: Entry) -> None:
        note = self.note if self.note is not None and self.note.key == entry.key() else None
        saved = self._show("verify-saved", note.text if note else NOT_SAVED_YET)
        saved.set_class(note is not None and note.saved, "-saved")
        saved.set_class(note is not None and not note.saved, "-not-saved")

    async def action_save(self) -> None:
        entry = self.entry()
        if self.note is not None and self.note.saved and self.note.key == entry.key():
            self.notify("Already saved: this record is in the log (change the order to verify again).")
            return
        state = evaluate(entry, self.formulary)  # judged again now, so the record carries the time of saving
        if state.record is None:
            self.note = SaveNote(
                entry.key(), not_saved_text(f"the record is not complete: {problem_text(state)}"), False
            )
        else:
            path = log_path(None)
            try:
                saved, digest = append_record(path, state.record)
            except (LogError, SigningKeyError) as error:  # a broken chain, or a key it cannot use: not saved
                self.note = SaveNote(entry.key(), not_saved_text(error), False)
            else:
                self.note = SaveNote(entry.key(), saved_text(saved.sequence, digest, path), True)
        self.notify(self.note.text.splitlines()[0], severity="information" if self.note.saved else "error")
        await self.recompute()

    def action_back(self) -> None:
        self.app.pop_screen()
