"""The verification: the order as written on the left, its re-check and the decision on the right, saved to the log.

The patient and labs come from the check screen (read-only here); every
figure, finding and decision comes from `osmodose.app.verify_view.evaluate`,
which calls the same core as `osmodose verify`.
"""

from __future__ import annotations

from collections.abc import Callable
from typing import ClassVar

from textual.app import ComposeResult
from textual.binding import BindingType
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.screen import Screen
from textual.widgets import Checkbox, Input, Static

from osmodose.app import keys
from osmodose.app.form_view import agent_choices
from osmodose.app.verify_view import (
    INITIALS_SPEC,
    ORDER_SPECS,
    PATIENT,
    PRINT_NAME,
    RETYPE_NOTE,
    Entry,
    SaveNote,
    VerifyState,
    box_message,
    box_reading,
    check_lines,
    decision_text,
    discrepancy_lines,
    evaluate,
    not_saved_text,
    patient_fields,
    patient_summary,
    printable,
    problem_text,
    recomputed_lines,
    saved_text,
    summary_lines,
)
from osmodose.app.widgets.accept_panel import AcceptPanel
from osmodose.app.widgets.choice_box import ChoiceBox
from osmodose.app.widgets.form_field import FormField, form_field
from osmodose.app.widgets.form_panel import FormPanel
from osmodose.app.widgets.formulary_bar import FormularyBar
from osmodose.app.widgets.keys_footer import KeysFooter
from osmodose.app.widgets.lines import LinesPanel, set_text
from osmodose.app.widgets.status_banner import StatusBanner
from osmodose.caution import CAUTION
from osmodose.check.judging import worst_status
from osmodose.errors import LogError, SigningKeyError
from osmodose.formulary.model import Formulary
from osmodose.verify import append_record, log_path

STATES = ("ok", "warn", "refuse", "invalid", "incomplete")
NOT_SAVED_YET = "not saved yet: ctrl+s appends this record to the verification log"


class VerifyScreen(Screen[None]):
    """Keeps what was typed while the user goes back to the check screen (it is installed, not rebuilt)."""

    BINDINGS: ClassVar[list[BindingType]] = keys.VERIFY

    def __init__(self, formulary: Formulary, check_values: Callable[[], dict[str, str]], demo: bool = False) -> None:
        super().__init__(id="verify-screen")
        self.formulary = formulary
        self.demo = demo
        self.check_values = check_values
        self.ticks: dict[str, bool] = {}
        self.reasons: dict[str, str] = {}
        self.verification: VerifyState | None = None
        self.note: SaveNote | None = None
        self.shown: dict[str, str] = {}
        self.generation = 0

    def compose(self) -> ComposeResult:
        agents = agent_choices(self.formulary.agents)
        yield FormularyBar(self.formulary, self.demo)
        yield StatusBanner("verify-status")
        yield Static(NOT_SAVED_YET, id="verify-saved", markup=False)
        yield LinesPanel("verify-summary", classes="summary")
        with Horizontal(id="verify-body"):
            form = VerticalScroll(id="verify-form")
            form.can_focus = False  # Tab goes from box to box, never to a scroll area
            with form:
                with Vertical(id="verify-patient", classes="panel") as box:
                    box.border_title = "patient & labs"
                    yield Static("", id="patient-typed", markup=False)
                    yield Static("", id="patient-error", markup=False)
                    yield Static("typed on the check screen: escape to change", classes="hint", markup=False)
                with Vertical(id="verify-order", classes="panel") as box:
                    box.border_title = "order as written"
                    yield Static(RETYPE_NOTE, id="retype-note", classes="hint", markup=False)
                    yield FormPanel(*(form_field(spec, agents if spec.key == "agent" else ()) for spec in ORDER_SPECS))
                verifier = FormPanel(form_field(INITIALS_SPEC), id="verify-verifier", classes="panel")
                verifier.border_title = "verifier"
                yield verifier
            results = VerticalScroll(id="verify-results")
            results.can_focus = False  # the accept boxes and reasons in it are the Tab stops
            with results:
                yield LinesPanel("discrepancies", "as written vs recomputed")
                yield LinesPanel("checks", "checks")
                yield AcceptPanel()
                yield LinesPanel("recomputed", "recomputed from the volume")
        yield Static(CAUTION, id="caution", markup=False)
        yield KeysFooter()

    async def on_mount(self) -> None:
        await self.recompute()
        self.query_one("#field-agent").focus()

    async def on_screen_resume(self) -> None:
        await self.recompute()  # the patient or labs may have changed on the check screen

    def boxes(self) -> list[FormField]:
        """Every box of the screen's form: the order as written, then the initials."""
        return [box for panel in self.query(FormPanel) for box in panel.boxes]

    def field_value(self, key: str) -> str:
        return self.query_one(f"#field-{key}", FormField).value

    def entry(self) -> Entry:
        fields = {f.spec.key: f.value for f in self.boxes()}
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

    async def on_choice_box_changed(self, event: ChoiceBox.Changed) -> None:
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
        self.query_one(StatusBanner).show(decision_text(state), state.state)
        self._show("patient-typed", patient_summary(entry.patient))
        self._show("patient-error", box_message(state, PATIENT)).display = state.field == PATIENT
        for f in self.boxes():
            message = box_message(state, f.spec.key)
            unit, converted = box_reading(entry, f.spec.key) if not message else ("", "")
            f.mark(message, bool(message) and not state.missing, converted)
            f.read_as(unit)
        self.query_one("#verify-summary", LinesPanel).show(summary_lines(state, entry))
        self.query_one("#discrepancies", LinesPanel).show(discrepancy_lines(state))
        self.query_one("#checks", LinesPanel).show(check_lines(state))
        accept.mark(state.field or "", box_message(state, state.field or ""), bad=not state.missing)
        self.query_one("#recomputed", LinesPanel).show(recomputed_lines(state))
        preview = state.preview
        borders: dict[str, list[str]] = {
            "discrepancies": [d.severity for d in preview.discrepancies] if preview else [],
            "checks": [x.severity for x in preview.result.findings] if preview else [],
            "accept": ["refuse"] * len(state.refusals) + ["warn"] * len(state.acceptable),
            "recomputed": ["refuse"] if state.outcome == "refused" else [],
        }
        for panel_id, severities in borders.items():
            panel = self.query_one(f"#{panel_id}")
            for name in ("warn", "refuse"):
                panel.set_class(worst_status(severities) == name, f"-{name}")
        self._show_note(entry)

    def _show(self, static_id: str, text: str) -> Static:
        """Replace a line's text only when it changed, without a relayout unless its size changes."""
        box = self.query_one(f"#{static_id}", Static)
        if set_text(box, text, self.shown.get(static_id, "")):
            self.shown[static_id] = text
        return box

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
                self.note = SaveNote(entry.key(), saved_text(saved.sequence, digest, path), True, digest)
        self.notify(self.note.text.splitlines()[0], severity="information" if self.note.saved else "error")
        await self.recompute()

    def action_back(self) -> None:
        self.app.pop_screen()

    def _saved_record(self) -> SaveNote | None:
        """The last save, while it still belongs to what is on screen."""
        note = self.note
        if note is not None and note.saved and note.key == self.entry().key():
            return note
        return None

    def action_copy_sha(self) -> None:
        """Copy the saved record's SHA-256 (to note in the chart; `osmodose log verify --expect` proves it)."""
        note = self._saved_record()
        if note is None:
            self.notify("Nothing to copy yet: ctrl+s saves the record and gives its sha256.", severity="error")
            return
        self.app.copy_to_clipboard(note.sha256)
        self.notify(f"sha256 {note.sha256} copied to the terminal's clipboard (where the terminal allows it).")

    def action_print(self) -> None:
        """Save the record as printable text (the saved record, or the decision on screen if not saved yet)."""
        from osmodose.app.screens.save import SaveScreen  # noqa: PLC0415 (opened when first asked for)

        state = self.verification
        record = state.record if state is not None else None
        if record is None:
            self.notify(f"Nothing to print: {problem_text(state) if state else 'no order'}.", severity="error")
            return
        note = self._saved_record()
        text = printable(record, note)
        self.app.push_screen(SaveScreen(text, default_name=PRINT_NAME, what="the verification record", noun="record"))
