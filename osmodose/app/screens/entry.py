"""A small form over the course screen: add a lab, a dose or a reading, or plan the next dose.

The form only collects text; `submit` (from `course_view`) parses it with the
command line's parsers and saves.  An error is marked at its field (or, for a
file problem, under the form) and nothing is written; a saved entry closes the
form with the re-read episode.  The plan form stays open and shows the report.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from typing import ClassVar

from textual.app import ComposeResult
from textual.binding import BindingType
from textual.containers import Vertical, VerticalScroll
from textual.screen import ModalScreen
from textual.widgets import Input, Label, Static

from osmodose.app import keys
from osmodose.app.course_view import CourseState, FormOutcome
from osmodose.app.form_view import FieldSpec
from osmodose.app.widgets.form_field import FormField, form_field
from osmodose.app.widgets.form_panel import FormPanel

Submit = Callable[[Mapping[str, str]], FormOutcome]
HINT = "enter: next field (on the last: {verb}) · ctrl+s: {verb} · escape: cancel"


class EntryScreen(ModalScreen[CourseState | None]):
    """Returns the new state after a save, or None when cancelled."""

    BINDINGS: ClassVar[list[BindingType]] = keys.FORM

    def __init__(
        self,
        title: str,
        specs: tuple[FieldSpec, ...],
        submit: Submit,
        agents: tuple[tuple[str, str], ...] = (),
        verb: str = "save",
    ) -> None:
        super().__init__(id="entry-screen")
        self.title_text = title
        self.specs = specs
        self.submit = submit
        self.agents = agents
        self.verb = verb

    def compose(self) -> ComposeResult:
        with Vertical(id="entry-box", classes="panel") as box:
            box.border_title = self.title_text
            yield FormPanel(*(form_field(spec, self.agents if spec.key == "agent" else ()) for spec in self.specs))
            yield Static("", id="entry-message", markup=False)
            yield Label(HINT.format(verb=self.verb), id="entry-hint")
            with VerticalScroll(id="entry-result"):
                yield Static("", id="entry-text", markup=False)

    def on_mount(self) -> None:
        self.query_one("#entry-result").display = False
        self.boxes()[0].control.focus()

    def boxes(self) -> tuple[FormField, ...]:
        return self.query_one(FormPanel).boxes

    def field(self, key: str) -> FormField:
        return self.query_one(f"#field-{key}", FormField)

    def values(self) -> dict[str, str]:
        return {f.spec.key: f.value for f in self.boxes()}

    def on_input_submitted(self, event: Input.Submitted) -> None:
        event.stop()
        last = self.boxes()[-1]
        if event.input is last.control:
            self.action_submit()
        else:
            self.focus_next()

    def action_submit(self) -> None:
        outcome = self.submit(self.values())
        self.show(outcome)
        if outcome.state is not None:
            self.dismiss(outcome.state)

    def show(self, outcome: FormOutcome) -> None:
        """Mark the field the error names (or say it under the form); clear every other mark."""
        for f in self.boxes():
            f.mark(f"✖ {outcome.error}" if f.spec.key == outcome.field else "", bad=f.spec.key == outcome.field)
        message = ""
        if outcome.error is not None:
            message = f"✖ {outcome.error}"
            if outcome.field:
                message = (
                    "✖ nothing was saved: see the marked field" if self.verb == "save" else "✖ see the marked field"
                )
        box = self.query_one("#entry-message", Static)
        box.update(message)
        box.set_class(bool(message), "-bad")
        result = self.query_one("#entry-result")
        result.display = bool(outcome.text)
        self.query_one("#entry-text", Static).update(outcome.text)
        if outcome.field:
            self.field(outcome.field).control.focus()

    def action_cancel(self) -> None:
        self.dismiss(None)
