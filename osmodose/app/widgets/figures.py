"""A panel of labelled figures whose values are replaced, never left stale."""

from __future__ import annotations

from collections.abc import Mapping, Sequence

from textual.app import ComposeResult
from textual.containers import Horizontal, Vertical
from textual.widgets import Label, Static

#: What a figure shows while the inputs do not give a valid result.
NOT_VALID = "—"


class FigureValue(Static):
    """One shown value; `text` is what the user reads."""

    def __init__(self, figure_id: str) -> None:
        super().__init__(NOT_VALID, id=f"fig-{figure_id}", classes="figure-value", markup=False)
        self.text = NOT_VALID

    def show(self, text: str) -> None:
        if text != self.text:  # an update re-lays the screen out: only when the figure changed
            self.text = text
            self.update(text)


class FigurePanel(Vertical):
    """Rows of (label, value) under a panel title from the trade's words."""

    def __init__(self, panel_id: str, title: str, rows: Sequence[tuple[str, str]]) -> None:
        super().__init__(id=panel_id, classes="panel")
        self.border_title = title
        self.rows = tuple(rows)

    def compose(self) -> ComposeResult:
        for figure_id, label in self.rows:
            with Horizontal(classes="figure-row"):
                yield Label(label, classes="figure-label")
                yield FigureValue(figure_id)

    def show(self, texts: Mapping[str, str] | None) -> None:
        """Put each figure's text in place; any not given (or None) shows as not valid."""
        for figure_id, _ in self.rows:
            self.query_one(f"#fig-{figure_id}", FigureValue).show((texts or {}).get(figure_id, NOT_VALID))
