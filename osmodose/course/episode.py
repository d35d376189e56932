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
"""

from __future__ import annotations

from collections.abc import Callable
from datetime import datetime
from typing import TYPE_CHECKING, Annotated, Any, Literal, Protocol, TypeVar

from pydantic import AfterValidator, AwareDatetime, BaseModel, ConfigDict, Field, create_model

from osmodose.case.fields import FIELDS, LAB_FIELDS
from osmodose.case.inputs import Labs, LabValues
from osmodose.science.choices import Sex, TbwMethod
from osmodose.science.formulas import cerebral_perfusion_pressure

#: The format this osmodose writes.  Bump it with a migration in `migrations`.
FORMAT_VERSION: Literal[3] = 3

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


class _LabEntryBase(LabValues):
    """One set of serum labs drawn at one time; the lab keys are made from the field table."""

    model_config = _FILE

    time: AwareDatetime
    """When the sample was drawn, with its UTC offset."""

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


class DoseEntry(BaseModel):
    """One dose given: which stock solution, how much, when and over how long."""

    model_config = _FILE

    time: AwareDatetime
    """When the infusion started, with its UTC offset."""
    agent_id: str = Field(min_length=1)
    """Id of the agent in the unit's formulary."""
    volume_ml: Volume
    """Volume given, mL."""
    duration_min: Duration | None = None
    """Infusion time in minutes; none for a push."""
    source: str | None = None
    """The FHIR MedicationAdministration it was imported from (MedicationAdministration/id); none if typed."""


class ReadingEntry(BaseModel):
    """One bedside pressure reading; CPP is computed, never stored."""

    model_config = _FILE

    time: AwareDatetime
    """When the pressures were read, with its UTC offset."""
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


class _Timed(Protocol):
    @property
    def time(self) -> datetime: ...


E = TypeVar("E", bound=_Timed)


def _by_time(entries: tuple[E, ...]) -> tuple[E, ...]:
    return tuple(sorted(entries, key=lambda entry: entry.time))


class Episode(BaseModel):
    """A whole episode file in the current format; entries are kept in time order."""

    model_config = _FILE

    format_version: Literal[3] = FORMAT_VERSION
    """Format of this file; older versions are migrated when read."""
    patient: EpisodePatient
    """The patient."""
    labs: Annotated[tuple[LabEntry, ...], AfterValidator(_by_time)] = ()
    """Serum labs, oldest first."""
    doses: Annotated[tuple[DoseEntry, ...], AfterValidator(_by_time)] = ()
    """Doses given, oldest first."""
    readings: Annotated[tuple[ReadingEntry, ...], AfterValidator(_by_time)] = ()
    """Bedside pressure readings, oldest first."""

    def with_entry(self, entry: LabEntry | DoseEntry | ReadingEntry) -> Episode:
        """A copy with one more entry, in time order (the file is never edited in place)."""
        field = {LabEntry: "labs", DoseEntry: "doses", ReadingEntry: "readings"}[type(entry)]
        entries = (*getattr(self, field), entry)
        return Episode.model_validate({**self.model_dump(), field: [e.model_dump() for e in entries]})

    def start(self) -> datetime | None:
        """The earliest time of any entry, the origin of the plot's hours."""
        entries: list[LabEntry | DoseEntry | ReadingEntry] = [*self.labs, *self.doses, *self.readings]
        times = [e.time for e in entries]
        return min(times) if times else None

    def last(self) -> datetime | None:
        """The latest time of any entry: where a review projects sodium to."""
        entries: list[LabEntry | DoseEntry | ReadingEntry] = [*self.labs, *self.doses, *self.readings]
        return max((e.time for e in entries), default=None)

    def to_json_text(self) -> str:
        """The file's text: indented, keys in model order, one trailing newline."""
        return self.model_dump_json(indent=2) + "\n"
