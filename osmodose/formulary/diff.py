"""What a new version of a formulary changes, in plain words, for review before it goes live.

Both files are compared after loading, so a change is reported in what it
means (the sodium an agent now delivers), not how it is written; figures are
compared at the rounding `formulary show` prints.  A route that now allows a
peripheral line is flagged in capitals: that is the change that can hurt.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Literal

from osmodose.formulary.limits import LIMIT_SPECS, display_unit
from osmodose.formulary.model import Agent, Formulary
from osmodose.formulary.summary import AgentRow, agent_cells, agent_rows
from osmodose.science.formulas import RELATIVE_NOISE

Area = Literal["formulary", "settings", "limits", "agents"]

ROUTE_NOW_PERIPHERAL = "NOW ALLOWED ON A PERIPHERAL LINE"
ROUTE_NOW_CENTRAL = "orders on a peripheral line will now be refused"


@dataclass(frozen=True)
class Change:
    """One difference: where it is, what it was and what it becomes, and the line that says so."""

    area: Area
    subject: str
    key: str
    old: str | None
    new: str | None
    text: str

    def to_json(self) -> dict[str, Any]:
        return {"area": self.area, "subject": self.subject, "key": self.key, "old": self.old, "new": self.new}


def diff_formularies(old: Formulary, new: Formulary) -> list[Change]:
    """Every change from `old` to `new`: header, settings, limits, then agents removed, added and changed."""
    changes: list[Change] = []
    for key in ("name", "version"):
        before, after = getattr(old, key), getattr(new, key)
        if before != after:
            changes.append(Change("formulary", key, key, before, after, f'{key}: "{before}" → "{after}"'))
    old_settings, new_settings = old.settings.model_dump(), new.settings.model_dump()
    for key, before in old_settings.items():
        after = new_settings[key]
        if before != after:
            line = f"setting {key}: {_setting(before)} → {_setting(after)}"
            changes.append(Change("settings", key, key, _setting(before), _setting(after), line))
    changes.extend(_limit_changes(old, new))
    changes.extend(_agent_changes(old, new))
    return changes


def summary_line(changes: list[Change], same_bytes: bool) -> str:
    if changes:
        return f"{len(changes)} change{'' if len(changes) == 1 else 's'}"
    if same_bytes:
        return "no changes (the files are identical)"
    return "no changes in meaning (the files differ only in comments, layout or order)"


def _setting(value: object) -> str:
    return f'"{value}"' if isinstance(value, str) else f"{value:g}" if isinstance(value, float) else str(value)


def _limit_changes(old: Formulary, new: Formulary) -> list[Change]:
    changes = []
    for name, spec in LIMIT_SPECS.items():
        before, after = old.limits.get(name), new.limits.get(name)
        was_set, is_set = name in old.limits.from_file, name in new.limits.from_file
        if before == after and was_set == is_set:
            continue
        unit = display_unit(spec.unit)
        shown_before = "not set" if before is None else f"{before:g} {unit}"
        shown_after = "not set" if after is None else f"{after:g} {unit}"
        if before == after:
            line = f"limit {name}: {shown_after}, {_origin(was_set)} → {_origin(is_set)} (same value)"
        elif was_set == is_set:
            line = f"limit {name}: {shown_before} → {shown_after}"
        else:
            line = f"limit {name}: {shown_before} ({_origin(was_set)}) → {shown_after} ({_origin(is_set)})"
        changes.append(Change("limits", name, name, shown_before, shown_after, line))
    return changes


def _origin(from_file: bool) -> str:
    return "set in the file" if from_file else "default"


def _agent_changes(old: Formulary, new: Formulary) -> list[Change]:
    old_by_id = {agent.id: (agent, row) for agent, row in zip(old.agents, agent_rows(old), strict=True)}
    new_by_id = {agent.id: (agent, row) for agent, row in zip(new.agents, agent_rows(new), strict=True)}
    changes = []
    for agent_id, (agent, _) in old_by_id.items():
        if agent_id not in new_by_id:
            line = f'agent removed: {agent_id} "{agent.label}"'
            changes.append(Change("agents", agent_id, "agent", agent.label, None, line))
    for agent_id, (agent, row) in new_by_id.items():
        if agent_id not in old_by_id:
            line = f'agent added: {agent_id} "{agent.label}": {_composition(row)}'
            changes.append(Change("agents", agent_id, "agent", None, agent.label, line))
    for agent_id, (agent, row) in new_by_id.items():
        if agent_id in old_by_id:
            before_agent, before_row = old_by_id[agent_id]
            changes.extend(_one_agent(agent_id, before_agent, before_row, agent, row))
    return changes


def _composition(row: AgentRow) -> str:
    cells = dict(zip(_COLUMN_KEYS, agent_cells(row), strict=True))
    return (
        f"{cells['concentration']}, Na {cells['sodium']} mmol/L, {cells['osmolarity']} mOsm/L, {cells['route']}, "
        f"presentations {cells['presentations']}, dose limits {cells['dose_limits']}, max rate {cells['max_rate']}"
    )


_COLUMN_KEYS = (
    "id",
    "label",
    "concentration",
    "sodium",
    "sodium_per_ml",
    "osmolarity",
    "g_per_ml",
    "route",
    "presentations",
    "dose_limits",
    "max_rate",
)

#: Compared cell -> (words in the change line, unit after the figures).
_FIGURES = {
    "label": ("label", ""),
    "concentration": ("concentration", ""),
    "sodium": ("sodium", " mmol/L"),
    "osmolarity": ("osmolarity", " mOsm/L"),
    "presentations": ("presentations", ""),
    "dose_limits": ("dose limits", ""),
    "max_rate": ("max rate", ""),
}


def _one_agent(agent_id: str, old: Agent, old_row: AgentRow, new: Agent, new_row: AgentRow) -> list[Change]:
    before = dict(zip(_COLUMN_KEYS, agent_cells(old_row), strict=True))
    after = dict(zip(_COLUMN_KEYS, agent_cells(new_row), strict=True))
    changes = []

    def add(key: str, old_text: str, new_text: str, line: str) -> None:
        changes.append(Change("agents", agent_id, key, old_text, new_text, f"agent {agent_id}: {line}"))

    if old.solute != new.solute:
        add("solute", old.solute, new.solute, f"solute {old.solute} → {new.solute}")
    for key, (words, unit) in _FIGURES.items():
        if before[key] == after[key]:
            continue
        quote = '"' if key in ("label", "concentration") else ""
        line = f"{words} {quote}{before[key]}{quote}{unit} → {quote}{after[key]}{quote}{unit}"
        if key == "concentration" and _same_strength(old, new):
            line += " (same strength)"
        add(key, before[key], after[key], line)
    if old.potassium_mmol_l != new.potassium_mmol_l:
        was, now = f"{old.potassium_mmol_l:g}", f"{new.potassium_mmol_l:g}"
        add("potassium", was, now, f"potassium {was} mmol/L → {now} mmol/L")
    if old.codes != new.codes:
        was, now = ", ".join(old.codes) or "none", ", ".join(new.codes) or "none"
        add("codes", was, now, f"medication codes {was} → {now}")
    if old.route != new.route:
        flag = ROUTE_NOW_PERIPHERAL if new.route == "peripheral" else ROUTE_NOW_CENTRAL
        add("route", before["route"], after["route"], f"route {before['route']} → {after['route']}: {flag}")
    return changes


def _same_strength(old: Agent, new: Agent) -> bool:
    """Whether a concentration written differently ("0.9% w/v" and "9 g/L") is the same strength."""
    if old.solute_g_per_l is None or new.solute_g_per_l is None:
        return False
    return math.isclose(old.solute_g_per_l, new.solute_g_per_l, rel_tol=RELATIVE_NOISE)
