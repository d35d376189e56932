"""Explicit steps that bring an older episode file up to the current format.

Each step takes the parsed JSON of version n and returns that of version n+1;
`migrate` chains them.  Steps only move and rename what the old format held,
they never guess a clinical value: anything an old file lacks stays absent.
Nothing is dropped: every key a step does not know is carried over as it is
(so the current model names it if it cannot be used), and a value a step
cannot carry (a list of labs that is not a list) refuses the file, naming it.
A file is rewritten in the current format only when a command next changes it.

Version history:

* 1: lab keys without units (`sodium`, `glucose`, ...), dose `agent`, times in
  UTC written without an offset, no bedside readings.
* 2: unit-suffixed keys (`sodium_mmol_l`, `agent_id`), every time with its UTC
  offset, bedside readings (MAP, ICP), patient label and TBW method.
* 3: entries may name the FHIR resource they were imported from (`sources` on
  labs and readings, `source` on doses), so a repeated import adds nothing twice.
* 4: urine outputs (volume, optionally sodium, potassium and the collection period).
* 5: a stable id on every entry (`L1`, `D1`, `R1`, `U1`, in file order), the trail
  of corrections on each entry, the removed entries, the episode's start.
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
    if not isinstance(entry, dict):
        raise MigrationError(f"{where}: is not an object")
    renamed: Data = {}
    for key, value in entry.items():
        new = keys.get(str(key), str(key))
        if new in renamed:
            raise MigrationError(f"{where}: has both {key} and the key it becomes, {new}")
        renamed[new] = value
    return renamed


def _entries(data: Data, field: str) -> list[Any]:
    """The list under `field` (absent: empty); anything else cannot be carried and refuses the file."""
    if field not in data:
        return []
    value = data[field]
    if not isinstance(value, list):
        shown = "null" if value is None else type(value).__name__
        raise MigrationError(f"{field}: is {shown}, not a list of entries, so it cannot be carried to the new format")
    return value


def v1_to_v2(data: Data) -> Data:
    """Rename lab and dose keys, add the UTC offset to every time; readings (if any) carried with their times."""
    moved: dict[str, list[Data]] = {}
    for field, keys in (("labs", _V1_LAB_KEYS), ("doses", {"agent": "agent_id"}), ("readings", {})):
        moved[field] = []
        for i, item in enumerate(_entries(data, field)):
            entry = _rename(item, keys, f"{field}[{i + 1}]")
            entry["time"] = _v1_time(entry.get("time"), f"{field}[{i + 1}].time")
            moved[field].append(entry)
    rest = {key: value for key, value in data.items() if key not in ("format_version", *moved)}
    return {**rest, "format_version": 2, **moved}


def v2_to_v3(data: Data) -> Data:
    """Nothing moves: version 3 only adds optional keys (an entry's FHIR source)."""
    return {**data, "format_version": 3}


def v3_to_v4(data: Data) -> Data:
    """Version 3 had no urine outputs: start with none (nothing else moves)."""
    if "outputs" in data:
        raise MigrationError("outputs: is in a format 3 file, which never had urine outputs")
    return {**data, "format_version": 4, "outputs": []}


def v4_to_v5(data: Data) -> Data:
    """Give every entry its id: kind letter and number in file order (time order, as osmodose wrote it)."""
    out: Data = {key: value for key, value in data.items() if key != "format_version"}
    for field, letter in (("labs", "L"), ("doses", "D"), ("readings", "R"), ("outputs", "U")):
        entries = _entries(data, field)
        for i, entry in enumerate(entries):
            if not isinstance(entry, dict):
                raise MigrationError(f"{field}[{i + 1}]: is not an object")
            if "id" in entry:
                raise MigrationError(f"{field}[{i + 1}]: has an id, which format 4 never had")
        if field in data:
            out[field] = [{"id": f"{letter}{i + 1}", **entry} for i, entry in enumerate(entries)]
    return {"format_version": 5, **out}


#: version n -> the step from n to n+1
MIGRATIONS: dict[int, Callable[[Data], Data]] = {1: v1_to_v2, 2: v2_to_v3, 3: v3_to_v4, 4: v4_to_v5}


def migrate(data: Data, version: int) -> Data:
    """Apply every step from `version` up to `FORMAT_VERSION`."""
    while version < FORMAT_VERSION:
        data = MIGRATIONS[version](data)
        version += 1
    return data
