"""The check: the paper form on the left, its figures and checks on the right, recomputed on every change.

The screen is laid out from the form's plain data alone (`form_view`), so it
is on screen, and typed into, while the app's loader thread reads the
formulary and imports the engine.  Until `engine_ready` it shows a loading
state and no figure; after it, every change is read by `view.evaluate` (the
core, as `osmodose check` reads it) and shown from `view.show`.
"""

from __future__ import annotations

from datetime import datetime
from typing import TYPE_CHECKING, ClassVar

from textual import events
from textual.app import ComposeResult
from textual.binding import BindingType
from textual.containers import Horizontal, VerticalScroll
from textual.message import Message
from textual.screen import Screen
from textual.widgets import Input, Static

from osmodose.app import keys
from osmodose.app.form_view import AMOUNT, AMOUNT_HINT, DOSE_MODE, FIELDS, agent_choices
from osmodose.app.shown import Shown, loading_shown
from osmodose.app.widgets.choice_box import ChoiceBox
from osmodose.app.widgets.form_field import FormField, form_field
from osmodose.app.widgets.form_panel import FormPanel
from osmodose.app.widgets.formulary_bar import FormularyBar
from osmodose.app.widgets.keys_footer import KeysFooter
from osmodose.app.widgets.lines import LinesPanel
from osmodose.app.widgets.status_banner import StatusBanner
from osmodose.caution import CAUTION

if TYPE_CHECKING:
    from osmodose.app.view import LoadedLabs, Outcome
    from osmodose.check.results import CheckResult
    from osmodose.datain import FhirFile
    from osmodose.formulary.model import Formulary

PANELS = ("patient", "labs", "order")
STATES = ("ok", "warn", "refuse", "invalid", "incomplete", "loading")


class MainScreen(Screen[None]):
    """Holds the latest `Shown`; every figure on screen comes from it and nothing else."""

    BINDINGS: ClassVar[list[BindingType]] = keys.CHECK
    _resumed = False

    def __init__(self, formulary: Formulary | None = None, demo: bool = False, loading: str = "") -> None:
        super().__init__(id="main-screen")
        self.formulary = formulary
        self.demo = demo
        self.loading_text = loading
        self.outcome: Outcome | None = None
        self.labs: LoadedLabs | None = None
        self.shown: Shown = loading_shown(loading)
        # Every box of the form, built once: read and marked on each key without a query.
        self.fields: dict[str, FormField] = {spec.key: form_field(spec) for spec in FIELDS}

    def post_message(self, message: Message) -> bool:
        """The first resume does not style the screen again: its widgets were styled as they mounted.

        Textual restyles every widget of a screen when it resumes (right for a
        screen coming back after another, whose theme may have changed
        meanwhile); on the first resume, moments after the mount, that second
        pass was a sixth of the first frame's time (benchmarks/first_frame.py).
        """
        if isinstance(message, events.ScreenResume) and not self._resumed:
            self._resumed = True
            if message.refresh_styles:
                message = events.ScreenResume(refresh_styles=False)
        return super().post_message(message)

    def on_resize(self, event: events.Resize) -> None:
        """A resize to the size the screen has changes nothing: no relayout for it.

        Textual sends the screen three at start (two from the app, one from the
        screen's own first layout), each a full layout of the screen while the
        loader reads the formulary; a layout still wanted is done by the next
        refresh all the same.
        """
        if event.size == self.size:
            event.prevent_default()  # Screen._on_resize would lay the whole screen out again

    def compose(self) -> ComposeResult:
        yield FormularyBar(self.formulary, self.demo, self.loading_text)
        shown = self.shown  # the loading state, or the empty form's: the first frame is the final one
        yield StatusBanner("status", shown.banner, shown.state)
        yield LinesPanel("summary", classes="summary", lines=shown.summary)
        with Horizontal(id="body"):
            form = VerticalScroll(id="form")
            form.can_focus = False  # Tab goes straight to the first field
            with form:
                for panel in PANELS:
                    boxes = FormPanel(
                        *(f for f in self.fields.values() if f.spec.panel == panel), id=panel, classes="panel"
                    )
                    boxes.border_title = panel
                    yield boxes
            with VerticalScroll(id="results", classes=f"-{shown.state}"):
                yield LinesPanel("checks", "checks", lines=shown.checks)
                yield LinesPanel("dose", shown.dose_title, lines=shown.dose)
                yield LinesPanel("figures", "figures", lines=shown.figures)
                notes = LinesPanel("notes", "notes", lines=tuple(((note, "muted"),) for note in shown.notes))
                notes.display = bool(shown.notes)
                yield notes
                labs_file = LinesPanel("labs-file", "labs file")
                labs_file.display = False
                yield labs_file
        yield Static(CAUTION, id="caution", markup=False)
        yield KeysFooter()

    def on_mount(self) -> None:
        if self.formulary is not None:
            self.engine_ready(self.formulary, self.demo)
        self.field("weight").control.focus()

    def engine_ready(self, formulary: Formulary, demo: bool) -> None:
        """The formulary is read and valid, the engine imported: offer its agents and judge what is typed."""
        self.formulary, self.demo = formulary, demo
        self.field("agent").set_choices(agent_choices(formulary.agents))
        self.query_one(FormularyBar).show(formulary, demo)
        self.recompute()

    def field(self, key: str) -> FormField:
        return self.fields[key]

    def values(self) -> dict[str, str]:
        return {key: f.value for key, f in self.fields.items()}

    def on_input_changed(self, event: Input.Changed) -> None:
        event.stop()
        self.recompute()

    def on_choice_box_changed(self, event: ChoiceBox.Changed) -> None:
        event.stop()
        if event.choice_box.id == f"field-{DOSE_MODE}":
            mode = self.field(DOSE_MODE).value or "dose"
            amount = self.field(AMOUNT).control
            if isinstance(amount, Input):
                amount.placeholder = AMOUNT_HINT.get(mode, "")
        self.recompute()

    def on_input_submitted(self, event: Input.Submitted) -> None:
        event.stop()
        self.focus_next()

    def recompute(self) -> None:
        """Evaluate the whole form and replace every shown figure (or blank them all); nothing while loading."""
        if self.formulary is None:
            return  # what is typed is kept, and judged as soon as the formulary is read
        from osmodose.app import view  # noqa: PLC0415 (imported by the loader thread before this runs)

        values = self.values()
        self.outcome = view.evaluate(values, self.formulary, self.labs)
        self.draw(view.show(self.outcome, values))

    def draw(self, shown: Shown) -> None:
        """Put `shown` on screen; each widget is touched only where its text changed."""
        self.shown = shown
        for f in self.fields.values():
            marked = f.spec.key == shown.marked
            unit, converted = shown.echoes.get(f.spec.key, ("", ""))
            f.mark(shown.mark if marked else "", marked and not shown.missing, converted)
            f.read_as(unit)
        self.query_one(StatusBanner).show(shown.banner, shown.state)
        self.query_one("#summary", LinesPanel).show(shown.summary)
        self.query_one("#checks", LinesPanel).show(shown.checks)
        self.query_one("#dose", LinesPanel).show(shown.dose, shown.dose_title)
        self.query_one("#figures", LinesPanel).show(shown.figures)
        notes = self.query_one("#notes", LinesPanel)
        notes.show(tuple(((note, "muted"),) for note in shown.notes))
        if notes.display != bool(shown.notes):
            notes.display = bool(shown.notes)
        labs_file = self.query_one("#labs-file", LinesPanel)
        labs_file.show(tuple(((line, "muted"),) for line in shown.labs_file))
        if labs_file.display != bool(shown.labs_file):
            labs_file.display = bool(shown.labs_file)
        # One restyle of the results for the new state, not one a class.
        self.query_one("#results").update_classes({f"-{state}": shown.state == state for state in STATES})

    def _result(self) -> CheckResult | None:
        outcome = self.outcome
        if outcome is None or outcome.result is None:
            why = outcome.message if outcome is not None else "the formulary is still being read"
            self.notify(f"Nothing to save: the results are not valid ({why}).", severity="error")
            return None
        return outcome.result

    def _summary(self) -> str | None:
        from osmodose.check.report import render_text  # noqa: PLC0415 (loaded with the engine)

        result = self._result()
        return None if result is None else render_text(result)

    def action_save(self) -> None:
        """The handover summary: the report of `osmodose check`, headed by the patient label, time and formulary."""
        from osmodose.app.screens.save import SaveScreen  # noqa: PLC0415 (opened when first asked for)
        from osmodose.check.handover import check_handover  # noqa: PLC0415 (loaded with the engine)

        result = self._result()
        if result is not None:
            what = "the handover summary (osmodose check's report under the patient label, time and formulary)"
            self.app.push_screen(SaveScreen(lambda label: check_handover(result, label), what=what), self._saved)

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
        for f in self.fields.values():
            f.reset()
        self.recompute()
        self.field("weight").control.focus()

    def action_labs_file(self) -> None:
        from osmodose.app.screens.labs_file import LabsFileScreen  # noqa: PLC0415 (opened when first asked for)

        if self.formulary is None:
            self.notify("The formulary is still being read: no labs file yet.", severity="error")
            return
        self.app.push_screen(LabsFileScreen(), self._labs_read)

    def _labs_read(self, file: FhirFile | None) -> None:
        """Fill the empty boxes from the file (typed ones stay, and win), then recompute."""
        from osmodose.app.view import LoadedLabs, fill_texts  # noqa: PLC0415 (loaded with the engine)
        from osmodose.errors import OsmodoseError  # noqa: PLC0415

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
