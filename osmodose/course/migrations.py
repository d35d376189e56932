"""Explicit steps that bring an older episode file up to the current format.

Each step takes the parsed JSON of version n and returns that of version n+1;
`migrate` chains them.  Steps only move and rename what the old format held,
they never guess a clinical value: anything an old file lacks stays absent.
A file is rewritten in the current format only when a command next changes it.

Version history:

* 1: lab keys without units (`sodium`, `glucose`, ...), dose `agent`, times in
  UTC written without an offset, no bedside readings.
* 2: unit-suffixed keys (`sodium_mmol_l`, `agent_id`), every time with its UTC
  offset, bedside readings (MAP, ICP), patient label and TBW method.
* 3: entries may name the FHIR resource they were imported from (`sources` on
  labs and readings, `source` on doses), so a repeated import adds nothing twice.
"""

from __future__ import annotations

from collections.abc import Callable
from datetime import UTC, datetime
from typing import Any

from osmodose.course.episode import FORMAT_VERSION

Data = dict[str, Any]

_V1_LAB_KEYS = {
    "sodium": "sodium_mmol_l",
    "potassium": "potassium_mmol_l",
    "glucose": "glucose_mmol_l",
    "urea": "urea_mmol_l",
    "osmolality": "osmolality_mosm_kg",
}


class MigrationError(ValueError):
    """An old file that a step cannot read; the store names the file."""


def _v1_time(value: object, where: str) -> str:
    """Version 1 wrote UTC times without an offset: say so explicitly."""
    try:
        moment = datetime.fromisoformat(str(value).strip()) if isinstance(value, str) else None
    except ValueError:
        moment = None
    if moment is None:
        raise MigrationError(f"{where}: {value!r} is not an ISO 8601 time")
    if moment.tzinfo is None:
        moment = moment.replace(tzinfo=UTC)
    return moment.isoformat()


def _rename(entry: object, keys: dict[str, str], where: str) -> Data:
    """An entry with keys renamed; keys of a JSON object are always text."""
    if not isinstance(entry, dict):
        raise MigrationError(f"{where}: is not an object")
    return {keys.get(str(key), str(key)): value for key, value in entry.items()}


def v1_to_v2(data: Data) -> Data:
    """Rename lab and dose keys, add the UTC offset to every time, start with no readings."""
    labs = []
    for i, lab in enumerate(data.get("labs", [])):
        entry = _rename(lab, _V1_LAB_KEYS, f"labs[{i + 1}]")
        entry["time"] = _v1_time(entry.get("time"), f"labs[{i + 1}].time")
        labs.append(entry)
    doses = []
    for i, dose in enumerate(data.get("doses", [])):
        entry = _rename(dose, {"agent": "agent_id"}, f"doses[{i + 1}]")
        entry["time"] = _v1_time(entry.get("time"), f"doses[{i + 1}].time")
        doses.append(entry)
    rest = {key: value for key, value in data.items() if key not in ("format_version", "labs", "doses")}
    return {**rest, "format_version": 2, "labs": labs, "doses": doses, "readings": []}


def v2_to_v3(data: Data) -> Data:
    """Nothing moves: version 3 only adds optional keys (an entry's FHIR source)."""
    return {**data, "format_version": 3}


#: version n -> the step from n to n+1
MIGRATIONS: dict[int, Callable[[Data], Data]] = {1: v1_to_v2, 2: v2_to_v3}


def migrate(data: Data, version: int) -> Data:
    """Apply every step from `version` up to `FORMAT_VERSION`."""
    while version < FORMAT_VERSION:
        data = MIGRATIONS[version](data)
        version += 1
    return data
