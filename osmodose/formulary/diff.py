"""What a new version of a formulary changes, in plain words, for review before it goes live.

Both files are compared after loading, so a change is reported in what it
means (the sodium an agent now delivers), not how it is written; figures are
compared at the rounding `formulary show` prints.  A route that now allows a
peripheral line is flagged in capitals: that is the change that can hurt.

The changes that can hurt most are also singled out (`Change.attention`, listed
first by `attention_lines`): a concentration, derived sodium or osmolarity
changed two-fold or more (a slipped decimal point), and any limit loosened or
removed (a ceiling raised, a floor lowered, a dose limit or maximum rate raised
or dropped, an agent no longer for adults only, a route now allowing a
peripheral line).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Literal

from osmodose.formulary.limits import LIMIT_SPECS, LimitSpec, display_unit
from osmodose.formulary.model import Agent, DoseLimit, Formulary
from osmodose.formulary.summary import AgentRow, agent_cells, agent_rows
from osmodose.science.formulas import RELATIVE_NOISE

Area = Literal["formulary", "settings", "limits", "agents"]

ROUTE_NOW_PERIPHERAL = "NOW ALLOWED ON A PERIPHERAL LINE"
ROUTE_NOW_CENTRAL = "orders on a peripheral line will now be refused"
#: A figure changed by this factor or more, either way, is singled out.
ATTENTION_FACTOR = 2.0
LOOSENED = "loosened"
REMOVED = "removed"


@dataclass(frozen=True)
class Change:
    """One difference: where it is, what it was and what it becomes, and the line that says so."""

    area: Area
    subject: str
    key: str
    old: str | None
    new: str | None
    text: str
    attention: str | None = None
    """Why this change is singled out at the top ("loosened", "removed", "10-fold change"), or None."""

    def to_json(self) -> dict[str, Any]:
        return {
            "area": self.area,
            "subject": self.subject,
            "key": self.key,
            "old": self.old,
            "new": self.new,
            "attention": self.attention,
        }


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


def attention_lines(changes: list[Change]) -> list[str]:
    """The changes singled out, each with why, to print before the rest; empty when none."""
    flagged = [change for change in changes if change.attention]
    if not flagged:
        return []
    return ["needs attention (loosened, removed, or changed two-fold or more):"] + [
        f"  !! {change.text} ({change.attention})" for change in flagged
    ]


def diff_json(old: Formulary, new: Formulary, changes: list[Change]) -> dict[str, Any]:
    """What `formulary diff --json` prints."""
    return {
        "old": {"path": old.path, "sha256": old.sha256, "demo": old.demo},
        "new": {"path": new.path, "sha256": new.sha256, "demo": new.demo},
        "attention": [change.text for change in changes if change.attention],
        "changes": [{**change.to_json(), "text": change.text} for change in changes],
    }


def render_diff(old: Formulary, new: Formulary, changes: list[Change]) -> str:
    """What `formulary diff` prints: both files, what needs attention first, one line per change, the count."""
    lines = [
        f'--- {old.path} ("{old.name}" version "{old.version}")',
        f'+++ {new.path} ("{new.name}" version "{new.version}")',
        *attention_lines(changes),
        *(change.text for change in changes),
        summary_line(changes, old.sha256 == new.sha256),
    ]
    return "\n".join(lines) + "\n"


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
        attention = _loosened(spec, before, after)
        changes.append(Change("limits", name, name, shown_before, shown_after, line, attention))
    return changes


def _loosened(spec: LimitSpec, before: float | None, after: float | None) -> str | None:
    """ "removed" or "loosened" when the new value lets more through, else None."""
    if spec.looser is None or before is None or before == after:
        return None
    if after is None:
        return REMOVED
    raised = after > before
    return LOOSENED if raised == (spec.looser == "higher") else None


def _fold(before: float | None, after: float | None) -> str | None:
    """ "N-fold change" when two figures differ by the attention factor or more, either way."""
    if before is None or after is None or before == after:
        return None
    low, high = sorted((abs(before), abs(after)))
    if low == 0:
        return "from zero" if before == 0 else "to zero"
    factor = high / low
    return f"{factor:.3g}-fold change" if factor >= ATTENTION_FACTOR else None


def _dose_limit_loosened(before: DoseLimit | None, after: DoseLimit | None) -> str | None:
    if before is None:
        return None
    if after is None:
        return REMOVED
    if after.kind != before.kind:
        return "changed unit: compare by hand"
    return LOOSENED if after.value > before.value else None


def _max_rate_loosened(before: float | None, after: float | None) -> str | None:
    if before is None:
        return None
    if after is None:
        return REMOVED
    return LOOSENED if after > before else None


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

    def add(key: str, old_text: str, new_text: str, line: str, attention: str | None = None) -> None:
        changes.append(Change("agents", agent_id, key, old_text, new_text, f"agent {agent_id}: {line}", attention))

    figures = {
        "concentration": (old.solute_g_per_l, new.solute_g_per_l),
        "sodium": (old.sodium_mmol_l, new.sodium_mmol_l),
        "osmolarity": (old.osmolarity_mosm_l, new.osmolarity_mosm_l),
        "max_rate": (old.max_rate_ml_h, new.max_rate_ml_h),
    }
    if old.solute != new.solute:
        add("solute", old.solute, new.solute, f"solute {old.solute} → {new.solute}")
    for key, (words, unit) in _FIGURES.items():
        if before[key] == after[key]:
            continue
        quote = '"' if key in ("label", "concentration") else ""
        line = f"{words} {quote}{before[key]}{quote}{unit} → {quote}{after[key]}{quote}{unit}"
        if key == "concentration" and _same_strength(old, new):
            line += " (same strength)"
        attention = _fold(*figures[key]) if key in ("concentration", "sodium", "osmolarity") else None
        if key == "dose_limits":
            attention = _dose_limit_loosened(old.dose_refuse, new.dose_refuse) or _dose_limit_loosened(
                old.dose_warn, new.dose_warn
            )
            if old.adult_only and not new.adult_only:
                attention = attention or "no longer for adults only"
        elif key == "max_rate":
            attention = _max_rate_loosened(*figures["max_rate"])
        add(key, before[key], after[key], line, attention)
    if old.potassium_mmol_l != new.potassium_mmol_l:
        was, now = f"{old.potassium_mmol_l:g}", f"{new.potassium_mmol_l:g}"
        add("potassium", was, now, f"potassium {was} mmol/L → {now} mmol/L")
    if old.codes != new.codes:
        was, now = ", ".join(old.codes) or "none", ", ".join(new.codes) or "none"
        add("codes", was, now, f"medication codes {was} → {now}")
    if old.route != new.route:
        peripheral = not new.central_only
        flag = ROUTE_NOW_PERIPHERAL if peripheral else ROUTE_NOW_CENTRAL
        line = f"route {before['route']} → {after['route']}: {flag}"
        add("route", before["route"], after["route"], line, LOOSENED if peripheral else None)
    return changes


def _same_strength(old: Agent, new: Agent) -> bool:
    """Whether a concentration written differently ("0.9% w/v" and "9 g/L") is the same strength."""
    if old.solute_g_per_l is None or new.solute_g_per_l is None:
        return False
    return math.isclose(old.solute_g_per_l, new.solute_g_per_l, rel_tol=RELATIVE_NOISE)
