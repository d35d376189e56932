"""The boxes of the app's forms, as plain data: no textual and no engine here.

Made from the field table (`osmodose.case.fields`), which is plain data too,
so the check screen can be laid out and typed into before pint, pydantic and
the formulary have loaded (the first frame is timed: benchmarks/first_frame.py).
Anything that reads a value or runs the check lives in `view.py`, imported
once the engine is ready.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass, replace
from typing import TYPE_CHECKING, Any, Literal, cast

from osmodose.case.fields import FIELDS as CASE_FIELDS
from osmodose.case.fields import keys
from osmodose.science.choices import DOSE_MODE as DOSE_CHOICE

if TYPE_CHECKING:
    from osmodose.formulary.model import Agent

Panel = Literal["patient", "labs", "order", "verifier", "lab", "dose", "reading", "plan"]

#: The order field whose meaning is chosen by the dose-mode select.
AMOUNT = "amount"
DOSE_MODE = "dose-mode"
#: (shown, value) of each dose style, in the words the screen uses for it everywhere.
DOSE_MODES: tuple[tuple[str, str], ...] = tuple((DOSE_CHOICE.label(mode), mode) for mode in DOSE_CHOICE.values)
#: What the amount box says while empty, for each dose style.
AMOUNT_HINT: dict[str, str] = {
    mode: CASE_FIELDS[mode].hint if mode in CASE_FIELDS else "" for mode in DOSE_CHOICE.values
}

#: Banner symbols: each status has its own word, colour and symbol.
SYMBOL = {"ok": "✔", "warn": "▲", "refuse": "✖", "invalid": "?", "incomplete": "…", "loading": "◌"}


@dataclass(frozen=True)
class FieldSpec:
    """One box of the paper form, in the order a checker fills it in."""

    key: str
    label: str
    panel: Panel
    hint: str = ""
    choices: tuple[tuple[str, str], ...] = ()
    """For a select: (shown, value) pairs; empty for a typed field."""
    blank: str = ""
    """For a select that may stay empty: what the empty choice says."""
    select: bool = False
    """A choice box (a select), even before its choices are known (the agents come with the formulary)."""


def spec_of(key: str, panel: Panel | None = None, **override: Any) -> FieldSpec:
    """The form box of a field of the field table (`osmodose.case.fields`), its words overridable."""
    field = CASE_FIELDS[key]
    choices = tuple((field.choice.label(v), v) for v in field.choice.values) if field.choice else ()
    # The agent is typed text on the command line; on a form it is picked from the formulary's agents.
    select = bool(choices) or key == "agent"
    spec = FieldSpec(key, field.label, panel or cast(Panel, field.group), field.hint, choices, field.empty, select)
    return replace(spec, **override) if override else spec


FIELDS: tuple[FieldSpec, ...] = (
    *(spec_of(key) for key in keys("patient")),
    # The patient's condition (raised ICP) is asked with the patient.
    *(spec_of(key, "patient") for key in keys("condition")),
    *(spec_of(key) for key in keys("labs")),
    # Urine over the infusion sits with the labs (optional; the projection then takes the losses out).
    *(spec_of(key, "labs") for key in keys("urine")),
    spec_of("agent"),
    FieldSpec(DOSE_MODE, "asked as", "order", choices=DOSE_MODES, select=True),
    FieldSpec(AMOUNT, "amount", "order", AMOUNT_HINT["dose"]),
    spec_of("duration"),
    spec_of("line"),
)


def shown_names(specs: tuple[FieldSpec, ...]) -> dict[str, str]:
    """What a form calls each field, for its errors: the box's label ("or BUN" as "BUN")."""
    return {spec.key: spec.label.removeprefix("or ") for spec in specs}


def agent_choices(agents: Iterable[Agent]) -> tuple[tuple[str, str], ...]:
    """(shown, id) per agent for a select: the id, the strength and the label, so no one picks by id alone."""
    choices = []
    for agent in agents:
        strength = agent.concentration_text or "as labelled"
        choices.append((f"{agent.id} · {strength} · {agent.label}", agent.id))
    return tuple(choices)
