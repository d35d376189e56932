"""Typed text to episode entries, shared by the command line and the app.

Lab values go through `osmodose.case.inputs.parse_check_request`, so a lab typed
into a course is read exactly as the same lab typed into a check: default
units, mg/dL converted with the molar masses, BUN or urea, plausibility.

Times are ISO 8601 (`2026-12-01T08:30+01:00`, `...Z`) or `now`.  A time
written without a UTC offset is taken as the computer's local time on that
date (daylight saving included) and stored with that offset, so the file
itself is never ambiguous.
"""

from __future__ import annotations

from collections.abc import Mapping
from datetime import datetime

from osmodose.case.inputs import parse_check_request
from osmodose.course.episode import DoseEntry, Episode, EpisodePatient, LabEntry, ReadingEntry
from osmodose.errors import InputError
from osmodose.formulary.model import Formulary
from osmodose.science.ranges import check_plausible
from osmodose.science.units import parse_quantity

TIME_ACCEPTED = "ISO 8601 such as 2026-12-01T08:30+00:00 (no offset = this computer's local time), or now"
LAB_FIELDS = ("sodium", "potassium", "glucose", "urea", "bun", "osmolality")


def _given(fields: Mapping[str, object]) -> dict[str, object]:
    return {k: v for k, v in fields.items() if v is not None and not (isinstance(v, str) and not v.strip())}


def parse_time(raw: object, field: str = "time", now: datetime | None = None) -> datetime:
    """An aware datetime from typed text; naive text is local time, stored with its offset."""
    if isinstance(raw, datetime):
        moment = raw
    else:
        text = str(raw).strip() if raw is not None else ""
        if not text:
            raise InputError(field, None, "is required", TIME_ACCEPTED)
        if text.lower() == "now":
            return (now or datetime.now()).astimezone()
        try:
            moment = datetime.fromisoformat(text)
        except ValueError:
            raise InputError(field, raw, "is not a time osmodose can read", TIME_ACCEPTED) from None
    return moment if moment.tzinfo is not None else moment.astimezone()


def parse_patient(fields: Mapping[str, object]) -> EpisodePatient:
    """The episode's patient from typed weight, age, sex and optional height, label, tbw-method."""
    given = _given(fields)

    def need(name: str) -> object:
        if name not in given:
            raise InputError(name, None, "is required")
        return given[name]

    def plain(name: str, unit: str) -> float:
        value = float(parse_quantity(name, need(name), unit).m_as(unit))
        return check_plausible(name, value, given[name])

    weight = plain("weight", "kg")
    age = plain("age", "year")
    sex = str(need("sex")).strip().lower()
    if sex not in ("female", "male"):
        raise InputError("sex", given["sex"], "is not a sex osmodose knows", "female or male")
    height = plain("height", "cm") if "height" in given else None
    method = None
    if "tbw-method" in given:
        method = str(given["tbw-method"]).strip().lower()
        if method not in ("fraction", "watson"):
            raise InputError("tbw-method", given["tbw-method"], "is not a method osmodose knows", "fraction or watson")
        if method == "watson" and height is None:
            raise InputError("height", None, "is required for the Watson formula", "a height in cm, or fraction")
    label = str(given["label"]).strip() if "label" in given else None
    return EpisodePatient(
        label=label,
        weight_kg=weight,
        age_years=age,
        sex=sex,  # type: ignore[arg-type]
        height_cm=height,
        tbw_method=method,  # type: ignore[arg-type]
    )


def parse_lab(episode: Episode, fields: Mapping[str, object]) -> LabEntry:
    """A lab entry from typed time and values (keys: time and LAB_FIELDS); sodium is required."""
    given = _given(fields)
    time = parse_time(given.get("time"))
    p = episode.patient
    request = parse_check_request(
        {
            "weight": p.weight_kg,
            "age": p.age_years,
            "sex": p.sex,
            **{name: given[name] for name in LAB_FIELDS if name in given},
        }
    )
    labs = request.labs
    return LabEntry(
        time=time,
        sodium_mmol_l=labs.sodium_mmol_l,
        potassium_mmol_l=labs.potassium_mmol_l,
        glucose_mmol_l=labs.glucose_mmol_l,
        urea_mmol_l=labs.urea_mmol_l,
        osmolality_mosm_kg=labs.osmolality_mosm_kg,
        entered={name: str(given[name]) for name in LAB_FIELDS if name in given},
    )


def parse_dose(formulary: Formulary, fields: Mapping[str, object]) -> DoseEntry:
    """A dose entry from typed time, agent, volume and optional duration; the agent must be in the formulary."""
    given = _given(fields)
    time = parse_time(given.get("time"))
    if "agent" not in given:
        raise InputError("agent", None, "is required")
    agent = formulary.agent(str(given["agent"]).strip())
    if "volume" not in given:
        raise InputError("volume", None, "is required")
    volume = check_plausible(
        "volume", float(parse_quantity("volume", given["volume"], "mL").m_as("mL")), given["volume"]
    )
    duration = None
    if "duration" in given:
        minutes = float(parse_quantity("duration", given["duration"], "min").m_as("min"))
        duration = check_plausible("duration", minutes, given["duration"])
    return DoseEntry(time=time, agent_id=agent.id, volume_ml=volume, duration_min=duration)


def parse_reading(fields: Mapping[str, object]) -> ReadingEntry:
    """A bedside reading from typed time, MAP and ICP (bare numbers in mmHg; kPa accepted)."""
    given = _given(fields)
    time = parse_time(given.get("time"))
    values = {}
    for name in ("map", "icp"):
        if name not in given:
            raise InputError(name, None, "is required")
        mmhg = float(parse_quantity(name, given[name], "mmHg").m_as("mmHg"))
        values[name] = check_plausible(name, mmhg, given[name])
    return ReadingEntry(time=time, map_mmhg=values["map"], icp_mmhg=values["icp"])
