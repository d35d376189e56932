"""One box of a form: its label, a typed field or a choice, what it reads as, and why it is marked.

Laid out as a grid (label | box | reading) with the mark under it, so a box is
four widgets and no row container: the form has some sixty boxes' worth of
widgets to build before the first frame.
"""

from __future__ import annotations

from textual.app import ComposeResult
from textual.containers import Container
from textual.widgets import Input, Label, Select, Static

from osmodose.app.form_view import FieldSpec
from osmodose.app.widgets.lines import set_text


class FormField(Container):
    """Holds one form value; `mark` shows at the field why it is wrong or still needed."""

    def __init__(self, spec: FieldSpec, choices: tuple[tuple[str, str], ...] = ()) -> None:
        super().__init__(id=f"field-{spec.key}", classes="field")
        self.spec = spec
        self.choices = choices or spec.choices
        self.message = ""
        self.marked = ""
        self.reading = ""

    def compose(self) -> ComposeResult:
        yield Label(self.spec.label, classes="field-label")
        if self.spec.select:
            yield Select(
                self.choices,
                prompt=self.spec.blank or "choose",
                allow_blank=bool(self.spec.blank),
                compact=True,
                id=f"in-{self.spec.key}",
            )
        else:
            yield Input(placeholder=self.spec.hint, compact=True, id=f"in-{self.spec.key}")
        yield Static("", classes="field-reading", markup=False)
        yield Static("", classes="field-message", markup=False)

    @property
    def control(self) -> Input | Select[str]:
        # query_one is typed to return a Widget; the box holds exactly one Input or Select with this id.
        return self.query_one(f"#in-{self.spec.key}")  # type: ignore[return-value]

    @property
    def value(self) -> str:
        control = self.control
        if isinstance(control, Input):
            return control.value
        return "" if control.is_blank() else str(control.value)

    def reset(self) -> None:
        control = self.control
        if isinstance(control, Input):
            control.value = ""
        elif self.spec.blank:
            control.clear()
        elif self.choices:
            control.value = self.choices[0][1]

    def set_choices(self, choices: tuple[tuple[str, str], ...]) -> None:
        """New options for a choice box (the agents, once the formulary is read)."""
        self.choices = choices
        control = self.control
        if isinstance(control, Select):
            control.set_options(choices)

    def chosen(self) -> str:
        """The shown words of the chosen option ("" for none, or for a typed box)."""
        value = self.value
        return next((shown for shown, v in self.choices if v == value), "") if self.spec.select and value else ""

    def mark(self, message: str, bad: bool, converted: str = "") -> None:
        """Show `message` under the field (`bad`: a wrong value, else one still needed), or else `converted`.

        An agent's box is narrow: under it stands the whole of the chosen option (id, strength and label).
        """
        if self.spec.key == "agent" and not converted:
            converted = self.chosen()
        self.marked = message
        self.set_class(bad, "-bad")
        self.set_class(not bad and bool(message), "-missing")
        self.set_class(not message and bool(converted), "-converted")
        text = message or converted
        if set_text(self.query_one(".field-message", Static), text, self.message):
            self.message = text

    def read_as(self, unit: str) -> None:
        """The unit a bare number is read in, beside the box ("kg")."""
        if set_text(self.query_one(".field-reading", Static), unit, self.reading):
            self.reading = unit
