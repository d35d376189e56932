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

Every entry has a stable id (`L1`, `D1`, `R1`, `U1`: kind and number, never
reused) and its trail of corrections (`EntryBase`): an amended entry keeps
each value it replaced, with who, when and why; a removed entry moves to
`removed`, where nothing is computed from it, with the same trail.  The
corrections themselves are made by `course.corrections`.
"""

from __future__ import annotations

from collections.abc import Callable
from datetime import datetime
from typing import TYPE_CHECKING, Annotated, Any, Literal, Protocol, TypeVar

from pydantic import (
    AfterValidator,
    AwareDatetime,
    BaseModel,
    ConfigDict,
    Field,
    ValidationInfo,
    create_model,
    model_validator,
)

from osmodose.case.fields import FIELDS, LAB_FIELDS
from osmodose.case.inputs import Labs, LabValues
from osmodose.science.choices import Sex, TbwMethod
from osmodose.science.formulas import cerebral_perfusion_pressure

#: The format this osmodose writes.  Bump it with a migration in `migrations`.
FORMAT_VERSION: Literal[5] = 5

_FILE = ConfigDict(extra="forbid", frozen=True, use_attribute_docstrings=True)


def _in_range(key: str) -> Callable[[float], float]:
    bounds = FIELDS[key].plausible
    assert bounds is not None, f"{key} has no plausible range"

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
Volume = Annotated[float, _ranged("volume")]
Duration = Annotated[float, _ranged("duration")]
Map = Annotated[float, _ranged("map")]
Icp = Annotated[float, _ranged("icp")]
UrineVolume = Annotated[float, _ranged("urine-volume")]
UrineSodium = Annotated[float, _ranged("urine-sodium")]
UrinePotassium = Annotated[float, _ranged("urine-potassium")]
Over = Annotated[float, _ranged("over")]


class EpisodePatient(BaseModel):
    """Who the episode is about, as the dosing figures need it."""

    model_config = _FILE

    label: str | None = None
    """Free text to tell episodes apart (bed, initials); never needed for a figure."""
    weight_kg: Weight
    """Actual body weight in kg, used for total body water and per-kg figures."""
    age_years: Age
    """Age in years."""
    sex: Sex
    """Sex used for the total-body-water fractions and the Watson formula."""
    height_cm: Height | None = None
    """Height in cm, needed for the Watson formula only."""
    tbw_method: TbwMethod | None = None
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

    id: str | None = Field(default=None, pattern=r"^[LDRU][1-9][0-9]{0,8}$")
    """Stable id within the episode: L, D, R or U (lab, dose, reading, urine output) and a number never reused."""
    time: AwareDatetime
    """When the sample was drawn, the infusion started, the pressures were read or the urine collection ended."""
    corrections: tuple[Correction, ...] = ()
    """Every amendment (and the removal) of this entry, oldest first."""

    @property
    def removed(self) -> bool:
        return any(c.action == "removed" for c in self.corrections)


class _LabEntryBase(EntryBase, LabValues):
    """One set of serum labs drawn at one time; the lab keys are made from the field table."""

    model_config = _FILE

    def labs(self) -> Labs:
        """These labs as a check's request takes them."""
        return Labs(**{f.attr: self.value(f.key) for f in LAB_FIELDS})


def _lab_entry_fields() -> dict[str, Any]:
    """Each lab of the field table, in its canonical unit, checked against its plausible range."""
    fields: dict[str, Any] = {}
    for f in LAB_FIELDS:
        kept = Annotated[float, _ranged(f.key)]
        what = f.help.split(";")[0]
        description = f"{what[0].upper()}{what[1:]}, {f.engine_unit}."
        fields[f.attr] = (
            (kept, Field(description=description))
            if f.required
            else (
                kept | None,
                Field(None, description=description),
            )
        )
    fields["entered"] = (dict[str, str], Field(default_factory=dict, description="Each value as the user typed it."))
    fields["sources"] = (
        dict[str, str],
        Field(
            default_factory=dict,
            description="The FHIR resource each value was imported from (Observation/id), by field key.",
        ),
    )
    return fields


if TYPE_CHECKING:

    class LabEntry(_LabEntryBase):
        """One set of serum labs drawn at one time (made from the field table)."""

        def __init__(self, **data: Any) -> None: ...

else:
    LabEntry = create_model("LabEntry", __base__=_LabEntryBase, __doc__=_LabEntryBase.__doc__, **_lab_entry_fields())


class DoseEntry(EntryBase):
    """One dose given: which stock solution, how much, when and over how long."""

    model_config = _FILE

    agent_id: str = Field(min_length=1)
    """Id of the agent in the unit's formulary."""
    volume_ml: Volume
    """Volume given, mL."""
    duration_min: Duration | None = None
    """Infusion time in minutes; none for a push."""
    source: str | None = None
    """The FHIR MedicationAdministration it was imported from (MedicationAdministration/id); none if typed."""


class ReadingEntry(EntryBase):
    """One bedside pressure reading; CPP is computed, never stored."""

    model_config = _FILE

    map_mmhg: Map
    """Mean arterial pressure, mmHg."""
    icp_mmhg: Icp
    """Intracranial pressure, mmHg."""
    sources: dict[str, str] = Field(default_factory=dict)
    """The FHIR Observation each pressure was imported from, by field key ("map", "icp"); empty if typed."""

    @property
    def cpp_mmhg(self) -> float:
        """Cerebral perfusion pressure, by the one CPP formula in `formulas`."""
        return float(cerebral_perfusion_pressure(self.map_mmhg, self.icp_mmhg))


class OutputEntry(EntryBase):
    """Urine passed: its volume and, when measured, its sodium and potassium, over a period ending at `time`."""

    model_config = _FILE

    volume_ml: UrineVolume
    """Urine volume over the period, mL."""
    sodium_mmol_l: UrineSodium | None = None
    """Urine sodium, mmol/L; without it the output stays out of the balance (it cannot be guessed)."""
    potassium_mmol_l: UrinePotassium | None = None
    """Urine potassium, mmol/L; not measured: taken as 0 (the balance then errs high)."""
    over_min: Over | None = None
    """The collection period ending at `time`, minutes; none: the output counts at `time`."""


class _Timed(Protocol):
    @property
    def time(self) -> datetime: ...


E = TypeVar("E", bound=_Timed)


def _by_time(entries: tuple[E, ...]) -> tuple[E, ...]:
    return tuple(sorted(entries, key=lambda entry: entry.time))


Entry = LabEntry | DoseEntry | ReadingEntry | OutputEntry
#: Each kind of entry: its list in the episode, its class, and the letter of its ids.
KINDS: dict[str, tuple[str, type[EntryBase], str]] = {
    "lab": ("labs", LabEntry, "L"),
    "dose": ("doses", DoseEntry, "D"),
    "reading": ("readings", ReadingEntry, "R"),
    "output": ("outputs", OutputEntry, "U"),
}


class RemovedEntry(BaseModel):
    """An entry taken out of the course: kept whole, with the correction that removed it last in its trail."""

    model_config = _FILE

    kind: Literal["lab", "dose", "reading", "output"]
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

    format_version: Literal[5] = FORMAT_VERSION
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
    outputs: Annotated[tuple[OutputEntry, ...], AfterValidator(_by_time)] = ()
    """Urine outputs, oldest first (by the end of their collection)."""
    removed: tuple[RemovedEntry, ...] = ()
    """Entries taken out of the course, with who removed them, when and why; never computed with."""

    _ids = model_validator(mode="before")(_with_ids)

    @model_validator(mode="after")
    def _ids_unique(self) -> Episode:
        seen: set[str] = set()
        for entry in (*self.entries(), *(r.entry for r in self.removed)):
            if entry.id in seen:
                raise ValueError(f"entry id {entry.id} is used twice")
            seen.add(entry.id or "")
        return self

    def with_entry(self, entry: Entry) -> Episode:
        """A copy with one more entry, in time order, given the next id of its kind (the file is never edited
        in place)."""
        field = {LabEntry: "labs", DoseEntry: "doses", ReadingEntry: "readings", OutputEntry: "outputs"}[type(entry)]
        entries = (*getattr(self, field), entry.model_copy(update={"id": None}))
        return Episode.model_validate({**self.model_dump(), field: [e.model_dump() for e in entries]})

    def entries(self) -> list[Entry]:
        """Every entry of every kind."""
        return [*self.labs, *self.doses, *self.readings, *self.outputs]

    def start(self) -> datetime | None:
        """The earliest time of any entry, the origin of the plot's hours."""
        times = [e.time for e in self.entries()]
        return min(times) if times else None

    def last(self) -> datetime | None:
        """The latest time of any entry: where a review projects sodium to."""
        return max((e.time for e in self.entries()), default=None)

    def to_json_text(self) -> str:
        """The file's text: indented, keys in model order, one trailing newline."""
        return self.model_dump_json(indent=2) + "\n"
