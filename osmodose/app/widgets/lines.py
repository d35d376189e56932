"""Tagged lines (`shown.Line`) as styled text, and updates that re-lay the screen out only when a size changes.

A keystroke changes the text of a few panels; a layout pass reflows the whole
screen, so `set_content` repaints a widget in place and asks for a layout only
when its new text needs more or fewer rows (or columns, for a widget sized to
its text).
"""

from __future__ import annotations

from textual.content import Content
from textual.markup import escape
from textual.widgets import Static

from osmodose.app.shown import Line, Role

STYLE: dict[Role, str] = {
    "": "",
    "label": "$text-muted",
    "value": "bold",
    "muted": "$text-muted",
    "ok": "bold $text-success",
    "warn": "bold $text-warning",
    "refuse": "bold $text-error",
    "struck": "strike $text-muted",
}


def markup(lines: tuple[Line, ...]) -> str:
    """Content markup for `lines`, each span styled by its role."""
    return "\n".join(
        "".join(f"[{STYLE[role]}]{escape(text)}[/]" if STYLE[role] else escape(text) for text, role in line)
        for line in lines
    )


def set_content(widget: Static, content: str | Content) -> None:
    """Replace `widget`'s text; re-lay the screen out only when the widget's size would change."""
    widget.update(content, layout=False)
    if not widget.is_mounted or not widget.display or widget.size.area == 0:
        widget.refresh(layout=True)
        return
    styles, size = widget.styles, widget.content_size
    container, viewport = widget.container_size, widget.app.size
    width = size.width
    if styles.width is not None and styles.width.is_auto:
        width = widget.get_content_width(container, viewport)
    height = size.height
    if styles.height is not None and styles.height.is_auto:
        height = widget.get_content_height(container, viewport, width)
    if (width, height) != (size.width, size.height):
        widget.refresh(layout=True)


class LinesPanel(Static):
    """A titled panel of tagged lines, redrawn only when its lines change."""

    def __init__(self, panel_id: str, title: str = "", classes: str = "panel", lines: tuple[Line, ...] = ()) -> None:
        """`lines` are shown from the first frame (a later `show` of the same lines costs nothing)."""
        super().__init__(markup(lines), id=panel_id, classes=classes)
        self.border_title = title
        self.lines = lines

    def show(self, lines: tuple[Line, ...], title: str | None = None) -> None:
        if title is not None and title != self.border_title:
            self.border_title = title
        if lines != self.lines:
            self.lines = lines
            set_content(self, markup(lines))


def set_text(widget: Static, text: str, current: str) -> bool:
    """Put plain `text` in `widget` when it differs from `current`; True when it changed."""
    if text == current:
        return False
    set_content(widget, Content(text))
    return True
