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
from typing import Annotated, Literal

from pydantic import AfterValidator, AwareDatetime, BaseModel, ConfigDict, Field

from osmodose.science.formulas import cerebral_perfusion_pressure
from osmodose.science.ranges import PLAUSIBLE
from osmodose.science.units import Q_

#: The format this osmodose writes.  Bump it with a migration in `migrations`.
FORMAT_VERSION = 2

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


class LabEntry(BaseModel):
    """One set of serum labs drawn at one time."""

    model_config = _FILE

    time: AwareDatetime
    """When the sample was drawn, with its UTC offset."""
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


class ReadingEntry(BaseModel):
    """One bedside pressure reading; CPP is computed, never stored."""

    model_config = _FILE

    time: AwareDatetime
    """When the pressures were read, with its UTC offset."""
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


class Episode(BaseModel):
    """A whole episode file in the current format; entries are kept in time order."""

    model_config = _FILE

    format_version: Literal[2] = FORMAT_VERSION
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
        times = [e.time for e in (*self.labs, *self.doses, *self.readings)]
        return min(times) if times else None

    def to_json_text(self) -> str:
        """The file's text: indented, keys in model order, one trailing newline."""
        return self.model_dump_json(indent=2) + "\n"
