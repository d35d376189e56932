"""Pydantic's complaints about a formulary file, in the words a pharmacist needs.

`describe` turns one validation error into a problem ("is not a known key
(did you mean 'sodium_refuse'?)"); `salvage` keeps what still validates once
the failing keys are left out, so one pass reports the problems inside the
values as well as those in the layout.
"""

from __future__ import annotations

import copy
from typing import Any

from pydantic import BaseModel, ValidationError

from osmodose.formulary.file_model import AgentEntry, FormularyFile, LimitsTable
from osmodose.formulary.limits import LIMIT_SPECS, display_unit


def key_path(loc: tuple[int | str, ...]) -> str:
    parts: list[str] = []
    for item in loc:
        if isinstance(item, int):
            parts[-1] = f"{parts[-1]}[{item + 1}]" if parts else f"[{item + 1}]"
        else:
            parts.append(str(item))
    return ".".join(parts)


def describe(item: Any) -> str:
    kind = item["type"]
    if kind == "missing":
        return "is required but missing"
    if kind == "extra_forbidden":
        return "is not a known key" + _did_you_mean(item["loc"])
    if kind == "literal_error":
        return f"{item['input']!r} is not one of {item['ctx']['expected']}"
    if kind == "string_type" and isinstance(item["input"], (int, float)) and not isinstance(item["input"], bool):
        return _bare_number(item["loc"], item["input"])
    return f"{item['msg'].rstrip('.')} (got {item['input']!r})"


#: The unit shown in the example when a quantity key is given a bare number.
_EXAMPLE_UNITS = {
    "concentration": "% w/v",
    "presentations": "mL",
    "dose_warn": "g/kg",
    "dose_refuse": "g/kg",
    "max_rate": "mL/h",
    "sodium": "mmol/L",
    "potassium": "mmol/L",
    "osmolarity": "mOsm/L",
}


def _bare_number(loc: tuple[int | str, ...], value: float) -> str:
    """A number where the file model wants text: quantities need their unit written out."""
    keys = [part for part in loc if isinstance(part, str)]
    unit = None
    if keys[:1] == ["limits"] and len(keys) == 2 and keys[1] in LIMIT_SPECS:
        unit = display_unit(LIMIT_SPECS[keys[1]].unit)
    elif keys[:1] == ["agents"] and len(keys) == 2:
        unit = _EXAMPLE_UNITS.get(keys[1])
    if unit is None:
        return f'{value!r} is a number: write it as quoted text, e.g. "{value}"'
    return f'{value!r} is a number without a unit: write it as quoted text with its unit, e.g. "{value} {unit}"'


def known_keys(loc: tuple[int | str, ...]) -> list[str]:
    """The keys the file model accepts in the table that holds the key at `loc`."""
    model: type[BaseModel] = FormularyFile
    for part in loc[:-1]:
        if isinstance(part, int):
            continue
        field_info = model.model_fields.get(part)
        if field_info is None:
            return []
        nested = _model_in(field_info.annotation)
        if nested is None:
            return []
        model = nested
    return list(model.model_fields)


def _model_in(annotation: Any) -> type[BaseModel] | None:
    """The pydantic model a field holds, directly or as the items of a list."""
    if isinstance(annotation, type) and issubclass(annotation, BaseModel):
        return annotation
    for arg in getattr(annotation, "__args__", ()):
        found = _model_in(arg)
        if found is not None:
            return found
    return None


def _did_you_mean(loc: tuple[int | str, ...]) -> str:
    known = known_keys(loc)
    import difflib  # noqa: PLC0415 (only a misspelt key needs it: check's start-up is timed)

    close = difflib.get_close_matches(str(loc[-1]), known, n=1, cutoff=0.6)
    if close:
        return f" (did you mean {close[0]!r}?)"
    return f" (known keys here: {', '.join(known)})" if known else ""


def salvage(
    data: dict[str, Any], failed: list[tuple[int | str, ...]]
) -> tuple[LimitsTable, list[tuple[int, AgentEntry]]]:
    """The limits and agents that still validate once every key that failed is left out.

    Lets one pass report the problems inside the values too (a bad
    concentration beside a misspelt key) instead of one layer at a time.
    Agents keep their place in the file so key paths stay true; an agent
    missing a required key is left out (its problem is already reported).
    """
    cleaned = copy.deepcopy(data)
    for loc in failed:
        table: Any = cleaned
        for part in loc[:-1]:
            table = _step(table, part)
            if table is None:
                break
        if table is not None:
            if isinstance(table, dict):
                table.pop(loc[-1], None)
            elif isinstance(table, list) and isinstance(loc[-1], int) and loc[-1] < len(table):
                table[loc[-1]] = None
    try:
        limits = LimitsTable.model_validate(cleaned.get("limits", {}))
    except ValidationError:
        limits = LimitsTable()
    entries: list[tuple[int, AgentEntry]] = []
    raw_agents = cleaned.get("agents")
    if isinstance(raw_agents, list):
        for index, raw in enumerate(raw_agents, start=1):
            if isinstance(raw, dict) and isinstance(raw.get("presentations"), list):
                raw["presentations"] = [size for size in raw["presentations"] if size is not None]
            try:
                entries.append((index, AgentEntry.model_validate(raw)))
            except ValidationError:
                continue
    return limits, entries


def _step(table: Any, part: int | str) -> Any:
    if isinstance(part, int):
        return table[part] if isinstance(table, list) and part < len(table) else None
    return table.get(part) if isinstance(table, dict) else None
