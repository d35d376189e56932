"""The formulary in force: the agent and limit tables `formulary show` prints."""

from __future__ import annotations

from typing import ClassVar

from textual.app import ComposeResult
from textual.binding import BindingType
from textual.containers import VerticalScroll
from textual.screen import Screen
from textual.widgets import DataTable, Footer, Static

from osmodose.app import keys
from osmodose.app.widgets.formulary_bar import FormularyBar
from osmodose.formulary.model import Formulary
from osmodose.formulary.summary import agent_rows, limit_rows

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

    BINDINGS: ClassVar[list[BindingType]] = keys.BACK

    def __init__(self, formulary: Formulary, demo: bool = False) -> None:
        super().__init__(id="formulary-screen")
        self.formulary = formulary
        self.demo = demo

    def compose(self) -> ComposeResult:
        f = self.formulary
        yield FormularyBar(f, self.demo)
        with VerticalScroll(id="formulary-body"):
            yield Static(f"{f.name}  v{f.version}\nsha256 {f.sha256}\n{f.path}", id="formulary-id", markup=False)
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
                a.id,
                a.label,
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
