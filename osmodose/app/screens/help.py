"""Help: every key, grouped by the screen it works on, and one line per figure with its formula."""

from __future__ import annotations

from typing import ClassVar

from rich.table import Table
from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import VerticalScroll
from textual.screen import Screen
from textual.widgets import Static

from osmodose.app import keys
from osmodose.app.help_text import FIGURE_HELP
from osmodose.app.widgets.formulary_bar import FormularyBar
from osmodose.app.widgets.keys_footer import KeysFooter
from osmodose.caution import CAUTION
from osmodose.formulary.model import Formulary

KEY_WIDTH = 22


def key_rows() -> list[tuple[str, str, str]]:
    """(where, key, what it does) for every key of every screen, then the keys a form's boxes answer to."""
    rows = [
        (where, b.key, b.description) for where, bindings in keys.BY_SCREEN for b in bindings if isinstance(b, Binding)
    ]
    return rows + list(keys.FORM_KEYS)


def _said(bindings: list[BindingType], key: str, description: str) -> str:
    """The footer's word, and what the key does where it says more ("save: append this record to ...")."""
    tooltip = next((b.tooltip for b in bindings if isinstance(b, Binding) and b.key == key and b.tooltip), "")
    return f"{description}: {tooltip}" if tooltip else description


def _table(rows: list[tuple[str, str]]) -> Table:
    """Rows of (left, right): the left column bold, a long right side wrapping under itself."""
    table = Table.grid(padding=(0, 1))
    table.add_column(width=KEY_WIDTH, style="bold")
    table.add_column(ratio=1)
    for left, right in rows:
        table.add_row(left, right)
    return table


class HelpScreen(Screen[None]):
    """Built from the binding lists the screens use, so it cannot drift from the footers."""

    BINDINGS: ClassVar[list[BindingType]] = keys.BACK

    def __init__(self, formulary: Formulary, demo: bool = False) -> None:
        super().__init__(id="help-screen")
        self.formulary = formulary
        self.demo = demo
        self.keys = key_rows()

    def compose(self) -> ComposeResult:
        yield FormularyBar(self.formulary, self.demo)
        with VerticalScroll(id="help-body"):
            bindings = dict(keys.BY_SCREEN)
            sections: dict[str, list[tuple[str, str]]] = {}
            for where, key, text in self.keys:
                sections.setdefault(where, []).append((key, _said(bindings.get(where, []), key, text)))
            for where, rows in sections.items():
                yield Static(f"keys: {where}", classes="help-title", markup=False)
                yield Static(_table(rows), classes="help-table")
            yield Static("figures", classes="help-title", markup=False)
            yield Static(_table(list(FIGURE_HELP)), classes="help-table")
            yield Static(CAUTION, classes="caution", markup=False)
        yield KeysFooter()
