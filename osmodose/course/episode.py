"""One patient's course of therapy, as it is kept in its episode file (JSON).

The models describe the current file format (`FORMAT_VERSION`); older files
are brought up to it by the explicit steps in `migrations` before they are
validated here, so a file written by an older osmodose still loads.  Values
are stored in canonical units (mmol/L, mOsm/kg, mL, min, mmHg) with the text
as the user typed it beside lab values; times are ISO 8601 with their UTC
offset, never without one, so a file means the same in any time zone.

Unknown keys are rejected (a misspelt key must not silently drop a value) and
every value is checked against the same plausibility ranges as typed input, so
a hand-edited file cannot slip a slipped decimal point past the findings.

Every entry has a stable id (`L1`, `D1`, `R1`: kind and number, never
reused) and its trail of corrections (`EntryBase`): an amended entry keeps
each value it replaced, with who, when and why; a removed entry moves to
`removed`, where nothing is computed from it, with the same trail.  The
corrections themselves are made by `course.corrections`.
"""

from __future__ import annotations

from collections.abc import Callable
from datetime import datetime
from typing import Annotated, Any, Literal

from pydantic import AfterValidator, AwareDatetime, BaseModel, ConfigDict, Field, ValidationInfo, model_validator

from osmodose.science.formulas import cerebral_perfusion_pressure
from osmodose.science.ranges import PLAUSIBLE
from osmodose.science.units import Q_

#: The format this osmodose writes.  Bump it with a migration in `migrations`.
FORMAT_VERSION = 3

_FILE = ConfigDict(extra="forbid", frozen=True, use_attribute_docstrings=True)


def _in_range(key: str) -> Callable[[float], float]:
    bounds = PLAUSIBLE[key]

    def check(value: float) -> float:
        if not (bounds.low <= value <= bounds.high):
            raise ValueError(f"{value:g} is outside the plausible range ({bounds.describe()})")
        return value

    return check


def _ranged(key: str) -> object:
    return AfterValidator(_in_range(key))


Weight = Annotated[float, _ranged("weight")]
Age = Annotated[float, _ranged("age")]
Height = Annotated[float, _ranged("height")]
Sodium = Annotated[float, _ranged("sodium")]
Potassium = Annotated[float, _ranged("potassium")]
Glucose = Annotated[float, _ranged("glucose")]
Urea = Annotated[float, _ranged("urea")]
Osmolality = Annotated[float, _ranged("osmolality")]
Volume = Annotated[float, _ranged("volume")]
Duration = Annotated[float, _ranged("duration")]
Map = Annotated[float, _ranged("map")]
Icp = Annotated[float, _ranged("icp")]


class EpisodePatient(BaseModel):
    """Who the episode is about, as the dosing figures need it."""

    model_config = _FILE

    label: str | None = None
    """Free text to tell episodes apart (bed, initials); never needed for a figure."""
    weight_kg: Weight
    """Actual body weight in kg, used for total body water and per-kg figures."""
    age_years: Age
    """Age in years."""
    sex: Literal["female", "male"]
    """Sex used for the total-body-water fractions and the Watson formula."""
    height_cm: Height | None = None
    """Height in cm, needed for the Watson formula only."""
    tbw_method: Literal["fraction", "watson"] | None = None
    """Total-body-water method; null takes the formulary's default."""


class Correction(BaseModel):
    """One change to an entry after it was saved: what, who, when, why, and the values it replaced."""

    model_config = _FILE

    action: Literal["amended", "removed"]
    """What was done to the entry."""
    at: AwareDatetime
    """When the correction was made, with its UTC offset."""
    initials: str = Field(min_length=1)
    """Initials of who made it."""
    reason: str = Field(min_length=1)
    """Why, in their words."""
    previous: dict[str, Any] = Field(default_factory=dict)
    """Each field the amendment changed, with the value it had before (as stored)."""


class EntryBase(BaseModel):
    """What every entry has: its id, its time, and its corrections."""

    model_config = _FILE

    id: str | None = Field(default=None, pattern=r"^[LDR][1-9][0-9]{0,8}$")
    """Stable id within the episode: L, D or R (lab, dose, reading) and a number never reused."""
    time: AwareDatetime
    """When the sample was drawn, the infusion started or the pressures were read, with its UTC offset."""
    corrections: tuple[Correction, ...] = ()
    """Every amendment (and the removal) of this entry, oldest first."""

    @property
    def removed(self) -> bool:
        return any(c.action == "removed" for c in self.corrections)


class LabEntry(EntryBase):
    """One set of serum labs drawn at one time."""

    model_config = _FILE

    sodium_mmol_l: Sodium
    """Serum sodium, mmol/L."""
    potassium_mmol_l: Potassium | None = None
    """Serum potassium, mmol/L."""
    glucose_mmol_l: Glucose | None = None
    """Serum glucose, mmol/L."""
    urea_mmol_l: Urea | None = None
    """Serum urea, mmol/L (a BUN typed in mg/dL is stored converted)."""
    osmolality_mosm_kg: Osmolality | None = None
    """Measured serum osmolality, mOsm/kg."""
    entered: dict[str, str] = Field(default_factory=dict)
    """Each value as the user typed it, for the record."""


class DoseEntry(EntryBase):
    """One dose given: which stock solution, how much, when and over how long."""

    model_config = _FILE

    agent_id: str = Field(min_length=1)
    """Id of the agent in the unit's formulary."""
    volume_ml: Volume
    """Volume given, mL."""
    duration_min: Duration | None = None
    """Infusion time in minutes; none for a push."""


class ReadingEntry(EntryBase):
    """One bedside pressure reading; CPP is computed, never stored."""

    model_config = _FILE

    map_mmhg: Map
    """Mean arterial pressure, mmHg."""
    icp_mmhg: Icp
    """Intracranial pressure, mmHg."""

    @property
    def cpp_mmhg(self) -> float:
        """Cerebral perfusion pressure, by the one CPP formula in `formulas`."""
        return float(cerebral_perfusion_pressure(Q_(self.map_mmhg, "mmHg"), Q_(self.icp_mmhg, "mmHg")).magnitude)


def _by_time(entries: tuple[object, ...]) -> tuple[object, ...]:
    return tuple(sorted(entries, key=lambda entry: entry.time))  # type: ignore[attr-defined]


Entry = LabEntry | DoseEntry | ReadingEntry
#: Each kind of entry: its list in the episode, its class, and the letter of its ids.
KINDS: dict[str, tuple[str, type[EntryBase], str]] = {
    "lab": ("labs", LabEntry, "L"),
    "dose": ("doses", DoseEntry, "D"),
    "reading": ("readings", ReadingEntry, "R"),
}


class RemovedEntry(BaseModel):
    """An entry taken out of the course: kept whole, with the correction that removed it last in its trail."""

    model_config = _FILE

    kind: Literal["lab", "dose", "reading"]
    """Which list it was removed from."""
    entry: Entry
    """The entry as it was, with its corrections."""

    @model_validator(mode="after")
    def _kind_matches(self) -> RemovedEntry:
        if not isinstance(self.entry, KINDS[self.kind][1]):
            raise ValueError(f"entry is not a {self.kind}")
        return self


def _entry_id(entry: object) -> object:
    if isinstance(entry, EntryBase):
        return entry.id
    return entry.get("id") if isinstance(entry, dict) else None


def _with_ids(data: Any, info: ValidationInfo) -> Any:
    """Give each entry built in memory without an id the next free one of its kind; in a file, a missing id is
    an error (the store validates files with `context={"from_file": True}`)."""
    if not isinstance(data, dict):
        return data
    from_file = bool(info.context and info.context.get("from_file"))
    data = dict(data)
    removed = [r.entry if isinstance(r, RemovedEntry) else r.get("entry") for r in data.get("removed") or ()
               if isinstance(r, (RemovedEntry, dict))]  # fmt: skip
    for field, _cls, letter in KINDS.values():
        if not isinstance(data.get(field), (list, tuple)):
            continue
        entries = list(data[field])
        taken = [str(i) for i in map(_entry_id, [*entries, *removed]) if isinstance(i, str) and i[:1] == letter]
        following = max((int(i[1:]) for i in taken if i[1:].isdigit()), default=0) + 1
        for index, entry in enumerate(entries):
            if _entry_id(entry) is not None or not isinstance(entry, (EntryBase, dict)):
                continue
            if from_file:
                raise ValueError(f"{field}[{index + 1}].id is missing")
            new_id = f"{letter}{following}"
            following += 1
            if isinstance(entry, EntryBase):
                entries[index] = entry.model_copy(update={"id": new_id})
            else:
                entries[index] = {**entry, "id": new_id}
        data[field] = entries
    return data


class Episode(BaseModel):
    """A whole episode file in the current format; entries are kept in time order."""

    model_config = _FILE

    format_version: Literal[3] = FORMAT_VERSION
    """Format of this file; older versions are migrated when read."""
    patient: EpisodePatient
    """The patient."""
    started: AwareDatetime | None = None
    """When the episode began, if known: no entry may be timed before it."""
    labs: Annotated[tuple[LabEntry, ...], AfterValidator(_by_time)] = ()
    """Serum labs, oldest first."""
    doses: Annotated[tuple[DoseEntry, ...], AfterValidator(_by_time)] = ()
    """Doses given, oldest first."""
    readings: Annotated[tuple[ReadingEntry, ...], AfterValidator(_by_time)] = ()
    """Bedside pressure readings, oldest first."""
    removed: tuple[RemovedEntry, ...] = ()
    """Entries taken out of the course, with who removed them, when and why; never computed with."""

    _ids = model_validator(mode="before")(_with_ids)

    @model_validator(mode="after")
    def _ids_unique(self) -> Episode:
        seen: set[str] = set()
        for entry in (*self.labs, *self.doses, *self.readings, *(r.entry for r in self.removed)):
            if entry.id in seen:
                raise ValueError(f"entry id {entry.id} is used twice")
            seen.add(entry.id or "")
        return self

    def with_entry(self, entry: LabEntry | DoseEntry | ReadingEntry) -> Episode:
        """A copy with one more entry, in time order, given the next id of its kind (the file is never edited
        in place)."""
        field = {LabEntry: "labs", DoseEntry: "doses", ReadingEntry: "readings"}[type(entry)]
        entries = (*getattr(self, field), entry.model_copy(update={"id": None}))
        return Episode.model_validate({**self.model_dump(), field: [e.model_dump() for e in entries]})

    def start(self) -> datetime | None:
        """The earliest time of any entry, the origin of the plot's hours."""
        times = [e.time for e in (*self.labs, *self.doses, *self.readings)]
        return min(times) if times else None

    def to_json_text(self) -> str:
        """The file's text: indented, keys in model order, one trailing newline."""
        return self.model_dump_json(indent=2) + "\n"
