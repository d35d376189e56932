"""The formulary in force: the agent and limit tables `formulary show` prints, wrapped to the screen's width.

Every cell wraps inside its column (nothing is cut at 80 columns, nothing
hides off to the right); the agents are split, as `formulary show` splits
them, into their composition and their label, stock and order limits.
"""

from __future__ import annotations

from typing import ClassVar

from rich import box
from rich.table import Table
from rich.text import Text
from textual.app import ComposeResult
from textual.binding import BindingType
from textual.containers import VerticalScroll
from textual.screen import Screen
from textual.widgets import Static

from osmodose.app import keys
from osmodose.app.widgets.formulary_bar import FormularyBar
from osmodose.app.widgets.keys_footer import KeysFooter
from osmodose.formulary.model import Formulary
from osmodose.formulary.summary import AgentRow, LimitRow, agent_rows, limit_rows
from osmodose.safe_text import escape_controls

COMPOSITION_COLUMNS = ("id", "strength", "solute", "Na mmol/L", "mOsm/L", "route")
STOCK_COLUMNS = ("id", "label", "kept as", "dose limits", "max rate")
LIMIT_COLUMNS = ("limit", "value", "meaning", "source")


def composition_cells(a: AgentRow) -> tuple[str, ...]:
    """Stock strengths in whole mmol/L and mOsm/L, as the trade reads them."""
    return (a.id, a.concentration, a.solute, f"{a.sodium_mmol_l:.0f}", f"{a.osmolarity_mosm_l:.0f}", a.route)


def stock_cells(a: AgentRow) -> tuple[str, ...]:
    return (a.id, a.label, a.presentations, a.dose_limits, a.max_rate)


def limit_cells(row: LimitRow) -> tuple[str, ...]:
    return (row.name, row.value, row.meaning, row.source)


def wrapped_table(columns: tuple[str, ...], rows: list[tuple[str, ...]], ratios: tuple[int, ...]) -> Table:
    """A table as wide as the screen whose cells wrap (long words fold): no column is ever cut.

    Cells are plain text with control characters shown escaped: a label from the
    file is never read as markup or as a terminal command.
    """
    table = Table(expand=True, box=box.SIMPLE_HEAD, pad_edge=False, header_style="bold")
    for name, ratio in zip(columns, ratios, strict=True):
        table.add_column(name, ratio=ratio, overflow="fold")
    for row in rows:
        table.add_row(*(Text(escape_controls(cell)) for cell in row))
    return table


class FormularyScreen(Screen[None]):
    """Agents and limits of the loaded file, with its full SHA-256 and path."""

    BINDINGS: ClassVar[list[BindingType]] = keys.BACK

    def __init__(self, formulary: Formulary, demo: bool = False) -> None:
        super().__init__(id="formulary-screen")
        self.formulary = formulary
        self.demo = demo
        agents = agent_rows(formulary)
        self.composition = [composition_cells(a) for a in agents]
        self.stock = [stock_cells(a) for a in agents]
        self.limits = [limit_cells(row) for row in limit_rows(formulary)]
        self.tables = {
            "agents-table": wrapped_table(COMPOSITION_COLUMNS, self.composition, (3, 2, 3, 2, 2, 3)),
            "stock-table": wrapped_table(STOCK_COLUMNS, self.stock, (3, 5, 3, 4, 2)),
            "limits-table": wrapped_table(LIMIT_COLUMNS, self.limits, (4, 2, 6, 3)),
        }

    def compose(self) -> ComposeResult:
        f = self.formulary
        yield FormularyBar(f, self.demo)
        with VerticalScroll(id="formulary-body"):
            shown = escape_controls(f"{f.name}  v{f.version}\nsha256 {f.sha256}\n{f.path}", keep_lines=True)
            yield Static(shown, id="formulary-id", markup=False)
            yield Static("agents: composition", classes="help-title", markup=False)
            yield Static(self.tables["agents-table"], id="agents-table")
            yield Static("agents: label, stock and order limits", classes="help-title", markup=False)
            yield Static(self.tables["stock-table"], id="stock-table")
            yield Static("limits in force", classes="help-title", markup=False)
            yield Static(self.tables["limits-table"], id="limits-table")
        yield KeysFooter()
