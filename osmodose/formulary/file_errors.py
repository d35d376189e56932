"""Pydantic's complaints about a formulary file, in the words a pharmacist needs.

`describe` turns one validation error into a problem in osmodose's own words,
never the library's: what is wrong, what is accepted, an example ("is not a
known key (did you mean 'sodium_refuse'?)"); `salvage` keeps what still validates once
the failing keys are left out, so one pass reports the problems inside the
values as well as those in the layout.
"""

from __future__ import annotations

import copy
import math
from typing import Any, get_args

from pydantic import BaseModel, ValidationError

from osmodose.errors import value_kind
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


#: One example line per key a formulary file has, for messages ("e.g. route = \"central\"").
_EXAMPLES: dict[str, str] = {
    "formulary": '[formulary] with name = "Ward 4 neuro ICU" and version = "2026-11"',
    "name": 'name = "Ward 4 neuro ICU"',
    "version": 'version = "2026-11"',
    "settings": "[settings] with elderly_age_years = 65",
    "elderly_age_years": "elderly_age_years = 65",
    "adult_age_years": "adult_age_years = 18",
    "ethanol_factor": 'ethanol_factor = "molar"',
    "tbw_method": 'tbw_method = "fraction"',
    "limits": '[limits] with sodium_refuse = "160 mmol/L"',
    "agents": 'one [[agents]] table per stock solution, with id = "nacl-3"',
    "id": 'id = "nacl-3"',
    "label": 'label = "Sodium chloride 3 % 250 mL"',
    "solute": 'solute = "sodium chloride"',
    "concentration": 'concentration = "3% w/v"',
    "route": 'route = "any-line"',
    "presentations": 'presentations = ["250 mL", "500 mL"]',
    "dose_warn": 'dose_warn = "5 mL/kg"',
    "dose_refuse": 'dose_refuse = "10 mL/kg"',
    "max_rate": 'max_rate = "1000 mL/h"',
    "sodium": 'sodium = "513 mmol/L"',
    "potassium": 'potassium = "4 mmol/L"',
    "osmolarity": 'osmolarity = "1027 mOsm/L"',
}
#: What each key is, in the words a message uses ("is not a route osmodose knows").
_NOUNS: dict[str, str] = {
    "solute": "solute",
    "route": "route",
    "ethanol_factor": "ethanol factor",
    "tbw_method": "total-body-water method",
}
_ID_RULE = 'lower-case letters, digits, ".", "_" or "-", starting with a letter or digit'


def describe(item: Any) -> str:
    """One validation problem in osmodose's words: what is wrong, what is accepted, an example.

    Never the validation library's own message: every kind of problem a
    formulary file can have is worded here (and tested word for word); an
    unforeseen kind still gets a plain sentence naming the value.
    """
    kind = item["type"]
    loc: tuple[int | str, ...] = tuple(item["loc"])
    value = item.get("input")
    ctx = item.get("ctx") or {}
    example = _example(loc)
    if kind == "missing":
        return "is required but missing" + _accepted("add it", example)
    if kind == "extra_forbidden":
        return "is not a known key" + _did_you_mean(loc)
    if kind == "literal_error":
        quoted = [f'"{v}"' for v in _literal_values(loc)]
        allowed = " or ".join([", ".join(quoted[:-1]), quoted[-1]] if len(quoted) > 2 else quoted)
        noun = _NOUNS.get(_last_key(loc), "value")
        article = "an" if noun[0] in "aeiou" else "a"
        return f"{_shown(value)} is not {article} {noun} osmodose knows" + _accepted(allowed, example)
    if kind == "string_type":
        if isinstance(value, (int, float)) and not isinstance(value, bool):
            return _bare_number(loc, value)
        return f"is {_kind(value)}, not text" + _accepted("quoted text", example)
    if kind == "string_too_short":
        return "is empty" + _accepted("some text", example)
    if kind == "string_too_long":
        most = ctx.get("max_length")
        return f"is {len(str(value))} characters long" + _accepted(f"at most {most} characters", example)
    if kind == "string_pattern_mismatch":
        return f"{_shown(value)} is not an id osmodose accepts" + _accepted(_ID_RULE, example)
    if kind == "list_type":
        if _last_key(loc) == "agents" and isinstance(value, dict):
            return "is a single [agents] table, not a list of agents" + _accepted("[[agents]] tables", example)
        return f"is {_kind(value)}, not a list" + _accepted("a list in square brackets", example)
    if kind == "too_short":
        return "has none" + _accepted("at least one", example)
    if kind in ("model_type", "dict_type", "model_attributes_type"):
        return f"is {_kind(value)}, not a table" + _accepted("a table", example)
    if isinstance(value, bool) and kind in ("greater_than_equal", "less_than_equal", "greater_than", "less_than"):
        return "is true or false, not a number" + _accepted("a plain number", example)
    if kind in ("float_type", "float_parsing", "int_type", "int_parsing", "finite_number"):
        return f"{_shown(value)} is not a number" + _accepted("a plain number", example)
    if kind in ("greater_than_equal", "less_than_equal", "greater_than", "less_than"):
        low, high = _bounds(loc)
        side = "below the lowest" if kind.startswith("greater") else "above the highest"
        return f"{_shown(value)} is {side} accepted" + _accepted(f"{low:g} to {high:g}", example)
    return f"{_shown(value)} cannot be used here" + _accepted("see docs/formulary.md", example)


def _accepted(what: str, example: str | None) -> str:
    return f" (accepted: {what}" + (f", e.g. {example})" if example else ")")


def _last_key(loc: tuple[int | str, ...]) -> str:
    keys = [part for part in loc if isinstance(part, str)]
    return keys[-1] if keys else ""


def _example(loc: tuple[int | str, ...]) -> str | None:
    """An example line for the key at `loc` (a limit's from its declared default and unit)."""
    keys = [part for part in loc if isinstance(part, str)]
    key = keys[-1] if keys else ""
    if keys[:1] == ["limits"] and len(keys) == 2 and key in LIMIT_SPECS:
        spec = LIMIT_SPECS[key]
        amount = f"{spec.default:g}" if spec.default is not None else "1"
        return f'{key} = "{amount} {display_unit(spec.unit)}"'
    if keys[:1] == ["agents"] and len(keys) == 2 and isinstance(loc[-1], int):
        return _EXAMPLES.get(key)  # an item of a list (a presentation)
    return _EXAMPLES.get(key)


def _kind(value: object) -> str:
    """What a TOML value is, in words."""
    return value_kind(value, none="empty", table="a table", other="a date or time")


def _shown(value: object) -> str:
    """A value as a message quotes it: text in double quotes, anything else as TOML writes it."""
    if isinstance(value, str):
        return f'"{value}"'
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float) and value.is_integer():
        return f"{value:g}"
    return str(value)


def _field(loc: tuple[int | str, ...]) -> Any:
    """The file model's field at `loc`, or None."""
    model: type[BaseModel] | None = FormularyFile
    info = None
    for part in loc:
        if isinstance(part, int):
            continue
        if model is None:
            return None
        info = model.model_fields.get(part)
        if info is None:
            return None
        model = _model_in(info.annotation)
    return info


def _literal_values(loc: tuple[int | str, ...]) -> tuple[str, ...]:
    info = _field(loc)
    return tuple(str(v) for v in get_args(info.annotation)) if info is not None else ()


def _bounds(loc: tuple[int | str, ...]) -> tuple[float, float]:
    """The accepted range of a number key, from the file model's constraints."""
    info = _field(loc)
    low, high = -math.inf, math.inf
    for rule in getattr(info, "metadata", ()):
        low = float(getattr(rule, "ge", getattr(rule, "gt", low)))
        high = float(getattr(rule, "le", getattr(rule, "lt", high)))
    return low, high


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
