"""One box of a form: its label, a typed field or a choice, what it reads as, and why it is marked.

Laid out as a grid (label | box | reading) with the mark under it, so a box is
four widgets and no row container: the form has some sixty boxes' worth of
widgets to build before the first frame.
"""

from __future__ import annotations

from textual.app import ComposeResult
from textual.containers import Container
from textual.geometry import Size
from textual.reactive import Reactive
from textual.widgets import Input, Label, Select, Static

from osmodose.app.form_view import FieldSpec
from osmodose.app.widgets.lines import set_text


class FieldInput(Input):
    """A typed box whose growing text repaints it and never re-lays the screen out.

    Textual's Input declares its scrolling width (`virtual_size`) as a layout
    change, so every key re-laid the whole screen (some hundred widgets) out;
    here the box is one row of a fixed grid cell, so only the box repaints.
    """

    virtual_size: Reactive[Size] = Reactive(Size(0, 0), layout=False)


class FormField(Container):
    """Holds one form value; `mark` shows at the field why it is wrong or still needed."""

    def __init__(self, spec: FieldSpec, choices: tuple[tuple[str, str], ...] = ()) -> None:
        super().__init__(id=f"field-{spec.key}", classes="field -select" if spec.select else "field")
        self.spec = spec
        self.choices = choices or spec.choices
        self.message = ""
        self.marked = ""
        self.reading = ""

        # Kept, not queried: the screen reads every box and marks every field on each key.
        self.control: Input | Select[str]
        if self.spec.select:
            self.control = Select(
                self.choices,
                prompt=self.spec.blank or "choose",
                allow_blank=bool(self.spec.blank),
                compact=True,
                id=f"in-{self.spec.key}",
            )
        else:
            self.control = FieldInput(placeholder=self.spec.hint, compact=True, id=f"in-{self.spec.key}")
        self.reading_box = Static("", classes="field-reading", markup=False)
        self.message_box = Static("", classes="field-message", markup=False)

    def compose(self) -> ComposeResult:
        yield Label(self.spec.label, classes="field-label")
        yield self.control
        yield self.reading_box
        yield self.message_box

    @property
    def value(self) -> str:
        control = self.control
        if isinstance(control, Input):
            return control.value
        return "" if control.is_blank() else str(control.value)

    def set_value(self, text: str) -> None:
        """Put `text` in the box (a value read from a file)."""
        self.control.value = text

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
        if set_text(self.message_box, text, self.message):
            self.message = text

    def read_as(self, unit: str) -> None:
        """The unit a bare number is read in, beside the box ("kg")."""
        if set_text(self.reading_box, unit, self.reading):
            self.reading = unit
