"""A part of a form: its boxes one under another, each with its label, unit and mark drawn around it.

The boxes are the panel's only children, laid out by the stylesheet's margins
(`.form-panel > FieldInput`: the label's columns on the left, the unit's on
the right); a box's mark takes the rows under it, its bottom margin, set here
to the mark's wrapped height.  The panel draws every label, unit and mark
itself, one Content, so a form is one widget a box and one a panel, not four.
"""

from __future__ import annotations

from textual import events
from textual.content import Content
from textual.widget import Widget

from osmodose.app.widgets.form_field import FormField, State

#: How the line under a box reads: a wrong value, a value still needed, or what a value was read as (in
#: the panel's own colour, muted by the stylesheet, as the labels and units are).
MARK_STYLE: dict[State, str] = {"": "", "bad": "bold $text-error", "missing": "$text-warning", "converted": ""}
LABEL_STYLE: dict[State, str] = {"": "", "bad": "bold $text-error", "missing": "", "converted": ""}


class FormPanel(Widget):
    """Holds form boxes (FormField) only; `box_changed` when a box's mark changes."""

    def __init__(self, *boxes: FormField, id: str | None = None, classes: str = "") -> None:
        super().__init__(*boxes, id=id, classes=f"form-panel {classes}".strip())
        self.boxes = boxes
        self._cache: dict[str, tuple[int, str, State, list[Content]]] = {}

    def mark_lines(self, box: FormField, width: int) -> list[Content]:
        """The line under `box` wrapped to `width` (what it reads as indented under the box, but an agent's)."""
        key = box.spec.key
        cached = self._cache.get(key)
        if cached is not None and cached[:3] == (width, box.message, box.state):
            return cached[3]
        lines: list[Content] = []
        if box.message and width > 0:
            indent = box.styles.margin.left if box.state == "converted" and key != "agent" else 0
            style = MARK_STYLE[box.state]
            for line in Content(box.message).wrap(max(1, width - indent)):
                lines.append(Content.assemble(" " * indent, line.stylize(style)))
        self._cache[key] = (width, box.message, box.state, lines)
        return lines

    def box_changed(self, box: FormField) -> None:
        """A box's mark changed: give it the rows it needs under it (a relayout only if that changes)."""
        self._fit(box, self.content_size.width)
        self.refresh()

    def _fit(self, box: FormField, width: int) -> None:
        rows = len(self.mark_lines(box, width)) if width else int(bool(box.message))
        margin = box.styles.margin
        if margin.bottom != rows:
            box.styles.margin = (margin.top, margin.right, rows, margin.left)

    def on_resize(self, event: events.Resize) -> None:
        """A new width wraps the marks anew."""
        for box in self.boxes:
            self._fit(box, self.content_size.width)

    def render(self) -> Content:
        """Each box's row: its label, the room the box is laid over, its unit; then its mark's rows."""
        width = self.content_size.width
        lines: list[Content] = []
        for box in self.boxes:
            margin = box.styles.margin
            label_width, unit_width = margin.left, margin.right
            lines.extend([Content()] * margin.top)
            lines.append(
                Content.assemble(
                    (box.spec.label[:label_width].ljust(label_width), LABEL_STYLE[box.state]),
                    " " * max(0, width - label_width - unit_width),
                    (" " + box.reading)[:unit_width].ljust(unit_width),
                )
            )
            marks = self.mark_lines(box, width)[: margin.bottom]
            lines.extend(marks)
            lines.extend([Content()] * (margin.bottom - len(marks)))
        return Content("\n").join(lines)
