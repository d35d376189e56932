"""One box of a form: its label, a typed field or a choice, what it reads as, and why it is marked.

Two widgets: the field draws its label, the unit beside the box and the mark
under it itself, and holds the box (an Input or a ChoiceBox) as its only child,
placed between label and unit by the box's margins in the stylesheet
(`.field > .field-box`).  The check screen has 21 boxes, and its first frame
is timed (benchmarks/first_frame.py): four widgets a box, and a Select's six,
were most of the screen's widgets to style and lay out before it showed.
"""

from __future__ import annotations

from typing import Literal

from textual.app import ComposeResult
from textual.content import Content
from textual.geometry import Size
from textual.reactive import Reactive
from textual.widget import Widget
from textual.widgets import Input

from osmodose.app.form_view import FieldSpec
from osmodose.app.widgets.choice_box import ChoiceBox

State = Literal["", "bad", "missing", "converted"]
#: How the line under a box reads: a wrong value, a value still needed, or what a value was read as (in
#: the field's own colour, muted by the stylesheet, as its label and unit are).
MARK_STYLE: dict[State, str] = {"": "", "bad": "bold $text-error", "missing": "$text-warning", "converted": ""}


class FieldInput(Input):
    """A typed box whose growing text repaints it and never re-lays the screen out.

    Textual's Input declares its scrolling width (`virtual_size`) as a layout
    change, so every key re-laid the whole screen (some hundred widgets) out;
    here the box is one row of a fixed width, so only the box repaints.
    """

    virtual_size: Reactive[Size] = Reactive(Size(0, 0), layout=False)

    def __init__(self, placeholder: str, id: str) -> None:
        super().__init__(placeholder=placeholder, id=id, classes="field-box")
        # Compact (no border), set without styling a widget not yet on screen (Input(compact=True) does).
        self.set_reactive(Input.compact, True)
        self.add_class("-textual-compact", update=False)


class FormField(Widget):
    """Holds one form value; `mark` shows at the field why it is wrong or still needed."""

    def __init__(self, spec: FieldSpec, choices: tuple[tuple[str, str], ...] = ()) -> None:
        super().__init__(id=f"field-{spec.key}", classes="field -select" if spec.select else "field")
        self.spec = spec
        self.choices = choices or spec.choices
        self.message = ""
        """The line under the box (a mark, or what the value reads as)."""
        self.marked = ""
        """The mark (why the value is wrong or still needed), "" when none."""
        self.reading = ""
        """The unit beside the box."""
        self.state: State = ""
        self._lines: tuple[int, str, State, list[Content]] = (0, "", "", [])

        # Kept, not queried: the screen reads every box and marks every field on each key.
        self.control: Input | ChoiceBox
        if self.spec.select:
            self.control = ChoiceBox(
                self.choices,
                prompt=self.spec.blank or "choose",
                allow_blank=bool(self.spec.blank),
                id=f"in-{spec.key}",
                classes="field-box",
            )
        else:
            self.control = FieldInput(self.spec.hint, id=f"in-{self.spec.key}")

    def compose(self) -> ComposeResult:
        yield self.control

    @property
    def value(self) -> str:
        return self.control.value

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
        if isinstance(self.control, ChoiceBox):
            self.control.set_choices(choices)

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
        state: State = ("bad" if bad else "missing") if message else ("converted" if converted else "")
        text = message or converted
        self.marked = message
        if state != self.state:
            self.update_classes({f"-{name}": state == name for name in ("bad", "missing", "converted")})
        if (text, state) == (self.message, self.state):
            return
        rows = len(self._message_lines(self.size.width)) if self.size.width else -1
        self.message, self.state = text, state
        # A new height re-lays the screen out; the same height only repaints this field.
        self.refresh(layout=not self.size.width or len(self._message_lines(self.size.width)) != rows)

    def read_as(self, unit: str) -> None:
        """The unit a bare number is read in, beside the box ("kg")."""
        if unit != self.reading:
            self.reading = unit
            self.refresh()

    def _message_lines(self, width: int) -> list[Content]:
        """The line under the box, wrapped to `width` (what it reads as indented under the box, but an agent's)."""
        if self._lines[:3] == (width, self.message, self.state):
            return self._lines[3]
        lines: list[Content] = []
        if self.message and width > 0:
            indent = self.control.styles.margin.left if self.state == "converted" and self.spec.key != "agent" else 0
            style = MARK_STYLE[self.state]
            for line in Content(self.message).wrap(max(1, width - indent)):
                lines.append(Content.assemble(" " * indent, line.stylize(style)))
        self._lines = (width, self.message, self.state, lines)
        return lines

    def get_content_height(self, container: Size, viewport: Size, width: int) -> int:
        return 1 + len(self._message_lines(width))

    def render(self) -> Content:
        """The label, the room the box is laid over, and the unit on the first row; the mark under them."""
        width = self.size.width
        margin = self.control.styles.margin
        label_width, unit_width = margin.left, margin.right
        label_style = "bold $text-error" if self.state == "bad" else ""
        first = Content.assemble(
            (self.spec.label[:label_width].ljust(label_width), label_style),
            " " * max(0, width - label_width - unit_width),
            (" " + self.reading)[:unit_width].ljust(unit_width),
        )
        return Content("\n").join([first, *self._message_lines(width)])
