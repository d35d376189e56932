"""What a screen shows, as lines of tagged text: plain data, no textual and no engine.

A line is a tuple of spans, each span its text and a role (a value, a refused
value, a warning...); the widgets turn roles into styles, so the plain-data
views (`view.py`, `verify_view.py`) decide what is shown and how it reads,
and tests read the same text without a terminal.  Light on purpose: the
check screen shows its loading state from this module alone.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Literal

from osmodose.app.form_view import SYMBOL

Role = Literal["", "label", "value", "muted", "ok", "warn", "refuse", "struck"]
#: One piece of a line: its text and how it is shown.
Span = tuple[str, Role]
Line = tuple[Span, ...]


def plain(lines: tuple[Line, ...]) -> list[str]:
    """Lines as plain text, without their roles (for tests and reading)."""
    return ["".join(text for text, _ in line).rstrip() for line in lines]


@dataclass(frozen=True)
class Shown:
    """Everything the check screen shows for one outcome (or while the engine loads)."""

    state: str
    """ok, warn, refuse, invalid, incomplete or loading: the status line's colour and the panels' borders."""
    banner: str
    summary: tuple[Line, ...]
    checks: tuple[Line, ...]
    dose_title: str
    dose: tuple[Line, ...]
    figures: tuple[Line, ...]
    notes: tuple[str, ...]
    values: dict[str, str] = field(default_factory=dict)
    """Each figure's text by id, as shown (absent when not valid)."""
    echoes: dict[str, tuple[str, str]] = field(default_factory=dict)
    """What each typed box reads as, by field key: (its unit beside a bare number, the value converted)."""
    marked: str | None = None
    """The field the error is marked at."""
    mark: str = ""
    """The text under that field."""
    missing: bool = False
    """The mark asks for a value still needed (not a wrong one)."""
    labs_file: tuple[str, ...] = ()
    """Where each value came from when a labs file is loaded (empty otherwise)."""


def loading_shown(what: str) -> Shown:
    """The screen while the formulary is read and checked: no figure and no check, only what is loading."""
    waiting: Line = ((f"{SYMBOL['loading']} {what}: no figures until it is read and checked", "muted"),)
    return Shown(
        state="loading",
        banner=f"{SYMBOL['loading']} LOADING: {what}",
        summary=(waiting,),
        checks=(waiting,),
        dose_title="dose",
        dose=(waiting,),
        figures=(waiting,),
        notes=(),
    )
