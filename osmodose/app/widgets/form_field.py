"""One box of a form (a typed field or a choice), its value, what it reads as, and why it is marked.

A box is one widget: its label, the unit beside it and the mark under it are
drawn by the panel that holds it (`form_panel.FormPanel`), in the box's
margins.  The check screen has 21 boxes and its first frame is timed
(benchmarks/first_frame.py): a widget for each label, unit and mark, or a
row container per box, was most of the screen's widgets to build, style and
lay out before it showed.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Literal, cast

from textual.geometry import Size
from textual.reactive import Reactive
from textual.widget import Widget
from textual.widgets import Input

from osmodose.app.form_view import FieldSpec
from osmodose.app.widgets.choice_box import ChoiceBox, Choices

if TYPE_CHECKING:
    from osmodose.app.widgets.form_panel import FormPanel

State = Literal["", "bad", "missing", "converted"]


class FormField(Widget):
    """What every box of a form answers to: its spec, its value, its mark and its unit.

    Not a widget of its own: `FieldInput` and `FieldChoice` are (each an Input
    or a ChoiceBox first, so Textual styles them as those, and a FormField);
    a screen finds its boxes through its panels (`FormPanel.boxes`), as
    Textual's CSS type names follow a widget's first base only.
    """

    spec: FieldSpec
    choices: Choices = ()
    marked: str = ""
    """The mark (why the value is wrong or still needed), "" when none."""
    message: str = ""
    """The line under the box: the mark, or what the value reads as."""
    reading: str = ""
    """The unit beside the box."""
    state: State = ""
    """bad (a wrong value), missing (a value still needed), converted (what a value reads as) or none."""
    if TYPE_CHECKING:
        value: str  # the box's own (Input.value, ChoiceBox.value: "" for none); not defined here, not to hide it

    @property
    def control(self) -> Input | ChoiceBox:
        """The box itself (the field and its box are one widget)."""
        return cast("Input | ChoiceBox", self)

    @property
    def panel(self) -> FormPanel | None:
        from osmodose.app.widgets.form_panel import FormPanel  # noqa: PLC0415 (the panel imports this module)

        parent = self.parent
        return parent if isinstance(parent, FormPanel) else None

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

    def set_choices(self, choices: Choices) -> None:
        """New options for a choice box (the agents, once the formulary is read)."""
        self.choices = choices

    def chosen(self) -> str:
        """The shown words of the chosen option ("" for none, or for a typed box)."""
        value = self.control.value
        return next((shown for shown, v in self.choices if v == value), "") if self.spec.select and value else ""

    def mark(self, message: str, bad: bool, converted: str = "") -> None:
        """Show `message` under the box (`bad`: a wrong value, else one still needed), or else `converted`.

        An agent's box is narrow: under it stands the whole of the chosen option (id, strength and label).
        """
        if self.spec.key == "agent" and not converted:
            converted = self.chosen()
        state: State = ("bad" if bad else "missing") if message else ("converted" if converted else "")
        text = message or converted
        self.marked = message
        if (text, state) == (self.message, self.state):
            return
        if state != self.state:
            self.update_classes({f"-{name}": state == name for name in ("bad", "missing", "converted")})
        self.message, self.state = text, state
        if (panel := self.panel) is not None:
            panel.box_changed(self)

    def read_as(self, unit: str) -> None:
        """The unit a bare number is read in, beside the box ("kg")."""
        if unit != self.reading:
            self.reading = unit
            if (panel := self.panel) is not None:
                panel.refresh()


class FieldInput(Input, FormField):
    """A typed box whose growing text repaints it and never re-lays the screen out.

    Textual's Input declares its scrolling width (`virtual_size`) as a layout
    change, so every key re-laid the whole screen out; here the box is one
    row of a fixed width, so only the box repaints.
    """

    virtual_size: Reactive[Size] = Reactive(Size(0, 0), layout=False)

    def __init__(self, spec: FieldSpec) -> None:
        super().__init__(placeholder=spec.hint, id=f"field-{spec.key}")
        self.spec = spec
        # Compact (no border), set without styling a widget not yet on screen (Input(compact=True) does).
        self.set_reactive(Input.compact, True)
        self.add_class("-textual-compact", update=False)


class FieldChoice(ChoiceBox, FormField):
    """A choice box of a form."""

    def __init__(self, spec: FieldSpec, choices: Choices = ()) -> None:
        choices = choices or spec.choices
        super().__init__(choices, prompt=spec.blank or "choose", allow_blank=bool(spec.blank), id=f"field-{spec.key}")
        self.spec = spec


def form_field(spec: FieldSpec, choices: Choices = ()) -> FieldInput | FieldChoice:
    """The box for `spec`: a choice (with `choices`, else the spec's own) or a typed field."""
    return FieldChoice(spec, choices) if spec.select else FieldInput(spec)
