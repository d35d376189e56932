"""Corrections with a trail: amend an entry's values, or take it out, keeping what it was, who, when and why.

Until now the only way to fix a mistyped lab was to edit the JSON by hand,
which leaves no trace.  `amend_entry` reads the new values with the very
parsers that read typed entries (`course.entries`), so an amended value is
checked exactly as a new one would be; the entry keeps its id, and its
trail gains a `Correction` holding each replaced value as it was stored,
the initials, the time and the reason.  `remove_entry` moves the entry,
whole, to the episode's `removed` list with the same trail: nothing is
computed from it any more, and `course show` still lists it as removed.
"""

from __future__ import annotations

from collections.abc import Mapping
from datetime import datetime, timedelta
from typing import Any

from osmodose.case.fields import LAB_FIELDS, LAB_KEYS, keys
from osmodose.course import times
from osmodose.course.entries import OUTPUT_KEYS, parse_dose_entry, parse_lab, parse_output, parse_reading
from osmodose.course.episode import (
    KINDS,
    Correction,
    DoseEntry,
    EntryBase,
    Episode,
    LabEntry,
    OutputEntry,
    ReadingEntry,
    RemovedEntry,
)
from osmodose.course.times import DEFAULT_MAX_AGE, check_entry_time
from osmodose.errors import InputError
from osmodose.formulary.model import Formulary
from osmodose.verify.decision import MAX_REASON_LENGTH, MIN_REASON_LENGTH, parse_initials

#: The fields each kind of entry can be amended in, with the command line's (and the forms') names.
AMENDABLE: dict[str, tuple[str, ...]] = {
    "lab": ("time", *LAB_KEYS),
    "dose": ("time", "agent", "volume", "duration"),
    "reading": ("time", *keys("reading")),
    "output": OUTPUT_KEYS,
}
#: Typed as a new value, this clears an optional value (a potassium entered on the wrong lab).
CLEAR = "none"
ID_ACCEPTED = "an entry id as course show lists it, e.g. L3, D1 or R2"
REASON_ACCEPTED = f"{MIN_REASON_LENGTH} to {MAX_REASON_LENGTH} characters saying why"


def find_entry(episode: Episode, entry_id: str) -> tuple[str, EntryBase]:
    """(kind, entry) for an id of an entry in force; InputError for an unknown or removed one."""
    wanted = str(entry_id).strip().upper()
    for kind, (field, _cls, _letter) in KINDS.items():
        for entry in getattr(episode, field):
            if entry.id == wanted:
                return kind, entry
    if any(r.entry.id == wanted for r in episode.removed):
        raise InputError("entry", entry_id, "was removed from this episode; it cannot be changed", ID_ACCEPTED)
    raise InputError("entry", entry_id, "is not an entry of this episode", ID_ACCEPTED)


def parse_reason(raw: object) -> str:
    text = " ".join(str(raw or "").split())
    if not MIN_REASON_LENGTH <= len(text) <= MAX_REASON_LENGTH:
        raise InputError("reason", raw if text else None, "is required: say why the entry is changed", REASON_ACCEPTED)
    return text


def _typed(entry: EntryBase) -> dict[str, str]:
    """The entry as typed fields that its parser reads back to the same values."""
    fields = {"time": entry.time.isoformat()}
    if isinstance(entry, LabEntry):
        for field in LAB_FIELDS:
            value = entry.value(field.key)
            if value is not None:
                fields[field.key] = entry.entered.get(field.key, repr(value))
        if "bun" in entry.entered and entry.urea_mmol_l is not None:
            fields.pop("urea", None)
            fields["bun"] = entry.entered["bun"]
    elif isinstance(entry, DoseEntry):
        fields["agent"] = entry.agent_id
        fields["volume"] = repr(entry.volume_ml)
        if entry.duration_min is not None:
            fields["duration"] = repr(entry.duration_min)
    elif isinstance(entry, ReadingEntry):
        fields["map"] = repr(entry.map_mmhg)
        fields["icp"] = repr(entry.icp_mmhg)
    elif isinstance(entry, OutputEntry):
        fields["urine-volume"] = repr(entry.volume_ml)
        for name, value in (
            ("urine-sodium", entry.sodium_mmol_l),
            ("urine-potassium", entry.potassium_mmol_l),
            ("over", entry.over_min),
        ):
            if value is not None:
                fields[name] = repr(value)
    return fields


def _values(entry: EntryBase) -> dict[str, Any]:
    data = entry.model_dump(mode="json")
    for key in ("id", "corrections", "entered"):
        data.pop(key, None)
    return data


def _replaced(
    episode: Episode, field: str, old: EntryBase, new: EntryBase | None, removed: RemovedEntry | None
) -> Episode:
    entries = [new if e.id == old.id else e for e in getattr(episode, field)]
    data = episode.model_dump()
    data[field] = [e.model_dump() for e in entries if e is not None]
    if removed is not None:
        data["removed"] = [*data["removed"], removed.model_dump()]
    return Episode.model_validate(data)


def amend_entry(
    episode: Episode,
    entry_id: str,
    changes: Mapping[str, object],
    initials: object,
    reason: object,
    formulary: Formulary | None = None,
    at: datetime | None = None,
    max_age: timedelta = DEFAULT_MAX_AGE,
) -> Episode:
    """A copy of `episode` with entry `entry_id` changed as typed in `changes` (field -> text; `none` clears one).

    Each new value is read and checked as a newly typed one; the entry keeps
    its id and gains a correction with the values it replaced.
    """
    kind, old = find_entry(episode, entry_id)
    given = {k: v for k, v in changes.items() if v is not None and not (isinstance(v, str) and not v.strip())}
    if not given:
        raise InputError("entry", entry_id, "has nothing to amend: give the new values", ", ".join(AMENDABLE[kind]))
    for name in given:
        if name not in AMENDABLE[kind]:
            raise InputError(name, None, f"is not a field of a {kind}", ", ".join(AMENDABLE[kind]))
    initials_text = parse_initials(initials)
    reason_text = parse_reason(reason)
    fields = _typed(old)
    for name, value in given.items():
        if name in ("urea", "bun"):  # one or the other
            fields.pop("bun" if name == "urea" else "urea", None)
        if str(value).strip().lower() == CLEAR:
            fields.pop(name, None)
        else:
            fields[name] = str(value)
    if kind == "lab":
        new: EntryBase = parse_lab(fields)
    elif kind == "dose":
        if formulary is None:
            raise ValueError("amending a dose needs the formulary")
        new = parse_dose_entry(formulary, fields)
    elif kind == "output":
        new = parse_output(fields)
    else:
        new = parse_reading(fields)
    if "time" in given:
        check_entry_time(episode, new.time, "time", max_age)
    before, after = _values(old), _values(new)
    previous = {key: before.get(key) for key in after if before.get(key) != after.get(key)}
    if not previous:
        raise InputError("entry", old.id, "is unchanged: the values given are the ones it has")
    correction = Correction(
        action="amended", at=at or times.now(), initials=initials_text, reason=reason_text, previous=previous
    )
    amended = new.model_copy(update={"id": old.id, "corrections": (*old.corrections, correction)})
    return _replaced(episode, KINDS[kind][0], old, amended, None)


def remove_entry(
    episode: Episode, entry_id: str, initials: object, reason: object, at: datetime | None = None
) -> Episode:
    """A copy of `episode` with entry `entry_id` moved, whole, to `removed`, its trail ending with the removal."""
    kind, old = find_entry(episode, entry_id)
    correction = Correction(
        action="removed", at=at or times.now(), initials=parse_initials(initials), reason=parse_reason(reason)
    )
    gone = old.model_copy(update={"corrections": (*old.corrections, correction)})
    return _replaced(episode, KINDS[kind][0], old, None, RemovedEntry(kind=kind, entry=gone))  # type: ignore[arg-type]
