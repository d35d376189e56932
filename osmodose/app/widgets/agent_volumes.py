"""A small table of agents and volumes: the equiosmolar doses under the dose, the fluids for the daily fall."""

from __future__ import annotations

from collections.abc import Callable

from textual.widgets import Static

from osmodose.app.view import Outcome
from osmodose.check.results import CheckResult

Rows = Callable[[CheckResult], list[tuple[str, str]]]


class AgentVolumes(Static):
    """Rows of (agent, volume), hidden while there are none; `lines` is the plain text shown."""

    def __init__(self, panel_id: str, title: str, rows: Rows) -> None:
        super().__init__("", id=panel_id, classes="panel agent-volumes", markup=False)
        self.border_title = title
        self.rows = rows
        self.lines: list[str] = []
        self.display = False

    def show(self, outcome: Outcome) -> None:
        rows = self.rows(outcome.result) if outcome.result is not None else []
        width = max((len(agent) for agent, _ in rows), default=0)
        lines = [f"{agent:<{width}}  {volume}" for agent, volume in rows]
        if lines != self.lines:
            self.lines = lines
            self.update("\n".join(lines))
            self.display = bool(lines)
