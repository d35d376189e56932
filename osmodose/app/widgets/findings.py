"""The checks panel (each finding with its word and symbol) and the notes panel under the figures."""

from __future__ import annotations

from textual.markup import escape
from textual.widgets import Static

from osmodose.app.view import SYMBOL, Outcome, finding_rows, labs_file_rows

_STYLE = {"": "$text-muted", "warn": "bold $text-warning", "refuse": "bold $text-error"}
NOT_VALID_CHECKS = "not valid: no checks until every field reads"


class ChecksPanel(Static):
    """Findings, refusals first; `lines` is the plain text shown, for tests and reading."""

    def __init__(self) -> None:
        super().__init__("", id="checks", classes="panel")
        self.border_title = "checks"
        self.lines: list[str] = []

    def show(self, outcome: Outcome) -> None:
        result = outcome.result
        rows = [("", NOT_VALID_CHECKS)]
        if result is not None:
            rows = finding_rows(result) or [("ok", f"{SYMBOL['ok']} OK: no limit crossed")]
        lines = [line for _, line in rows]
        if lines == self.lines:
            return
        self.lines = lines
        self.update("\n".join(f"[{_STYLE.get(severity, '$text-success')}]{escape(line)}[/]" for severity, line in rows))


class NotesPanel(Static):
    """The core's notes on the result (what the projection leaves out, filters, risk)."""

    def __init__(self) -> None:
        super().__init__("", id="notes", classes="panel", markup=False)
        self.border_title = "notes"
        self.lines: list[str] = []
        self.display = False

    def show(self, outcome: Outcome) -> None:
        lines = [f"- {note}" for note in outcome.result.notes] if outcome.result else []
        if lines != self.lines:
            self.lines = lines
            self.update("\n".join(lines))
            self.display = bool(lines)


class LabsFilePanel(Static):
    """Where each value came from when a labs file is loaded: resource, drawn when, how old; or typed."""

    def __init__(self) -> None:
        super().__init__("", id="labs-file", classes="panel", markup=False)
        self.border_title = "labs file"
        self.lines: list[str] = []
        self.display = False

    def show(self, outcome: Outcome) -> None:
        lines = labs_file_rows(outcome.result) if outcome.result else []
        if lines != self.lines:
            self.lines = lines
            self.update("\n".join(lines))
            self.display = bool(lines)
