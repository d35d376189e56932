"""The formulary in force: the agent and limit tables `formulary show` prints."""

from __future__ import annotations

from typing import ClassVar

from textual.app import ComposeResult
from textual.binding import Binding, BindingType
from textual.containers import VerticalScroll
from textual.screen import Screen
from textual.widgets import DataTable, Footer, Static

from osmodose.formulary.model import Formulary
from osmodose.formulary.summary import agent_rows, limit_rows
from osmodose.safe_text import escape_controls

AGENT_COLUMNS = (
    "id",
    "label",
    "solute",
    "strength",
    "Na mmol/L",
    "mOsm/L",
    "route",
    "kept as",
    "dose limits",
    "max rate",
)
LIMIT_COLUMNS = ("limit", "value", "meaning", "source")


class FormularyScreen(Screen[None]):
    """Agents and limits of the loaded file, with its full SHA-256 and path."""

    BINDINGS: ClassVar[list[BindingType]] = [Binding("escape", "app.pop_screen", "back")]

    def __init__(self, formulary: Formulary) -> None:
        super().__init__(id="formulary-screen")
        self.formulary = formulary

    def compose(self) -> ComposeResult:
        f = self.formulary
        with VerticalScroll(id="formulary-body"):
            shown = escape_controls(f"{f.name}  v{f.version}\nsha256 {f.sha256}\n{f.path}", keep_lines=True)
            yield Static(shown, id="formulary-id", markup=False)
            yield Static("agents", classes="help-title")
            yield DataTable(id="agents-table", cursor_type="row", zebra_stripes=True)
            yield Static("limits", classes="help-title")
            yield DataTable(id="limits-table", cursor_type="row", zebra_stripes=True)
        yield Footer()

    def on_mount(self) -> None:
        agents = self.query_one("#agents-table", DataTable)
        agents.add_columns(*AGENT_COLUMNS)
        for a in agent_rows(self.formulary):
            agents.add_row(
                escape_controls(a.id),
                escape_controls(a.label),
                a.solute,
                a.concentration,
                f"{a.sodium_mmol_l:g}",
                f"{a.osmolarity_mosm_l:g}",
                a.route,
                a.presentations,
                a.dose_limits,
                a.max_rate,
            )
        limits = self.query_one("#limits-table", DataTable)
        limits.add_columns(*LIMIT_COLUMNS)
        for row in limit_rows(self.formulary):
            limits.add_row(row.name, row.value, row.meaning, row.source)
