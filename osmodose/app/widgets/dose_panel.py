"""The dose panel: what was ordered, its figures, and the volume against the stock sizes."""

from __future__ import annotations

from textual.app import ComposeResult
from textual.widgets import Static

from osmodose.app.view import DOSE_FIGURES, SYMBOL, Outcome, dose_texts, stock_rows
from osmodose.app.widgets.figures import NOT_VALID, FigurePanel
from osmodose.safe_text import escape_controls


class DosePanel(FigurePanel):
    """Titled with the status word and symbol, so a refused order reads as refused here too."""

    def __init__(self) -> None:
        super().__init__("dose", "dose", DOSE_FIGURES)
        self.order_text = NOT_VALID
        self.stock: list[str] = []

    def compose(self) -> ComposeResult:
        yield Static(NOT_VALID, id="dose-order", markup=False)
        yield from super().compose()
        yield Static("", id="dose-stock", markup=False)

    def show_outcome(self, outcome: Outcome) -> None:
        result = outcome.result
        if result is None or result.dose is None:
            self.order_text = "not valid: see the marked field" if result is None else "no order entered"
            self.stock = []
            self.border_title = "dose"
            self.show(None)
            self.set_class(result is not None, "-no-order")
        else:
            dose = result.dose
            line = f", {result.line} line" if result.line else ""
            self.order_text = escape_controls(f"{dose.agent_label}\nasked: {dose.requested}{line}", keep_lines=True)
            self.stock = stock_rows(result)
            self.border_title = f"dose {SYMBOL[result.status]} {result.status.upper()}"
            self.show(dose_texts(result))
            self.remove_class("-no-order")
        self.query_one("#dose-order", Static).update(self.order_text)
        stock = "\n".join(["from stock:", *(f"  {row}" for row in self.stock)]) if self.stock else ""
        box = self.query_one("#dose-stock", Static)
        box.update(stock)
        box.set_class(not stock, "-empty")
