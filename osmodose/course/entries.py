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

from osmodose.case.fields import LAB_FIELDS, LAB_KEYS, keys, read
from osmodose.case.inputs import given_fields, need, parse_labs
from osmodose.case.times import parse_time
from osmodose.course.episode import DoseEntry, EpisodePatient, LabEntry, ReadingEntry
from osmodose.errors import InputError
from osmodose.formulary.model import Formulary
from osmodose.science.choices import SEX, TBW_METHOD


def parse_patient(fields: Mapping[str, object]) -> EpisodePatient:
    """The episode's patient from typed weight, age, sex and optional height, label, tbw-method."""
    given = given_fields(dict(fields))
    weight = read("weight", need(given, "weight"))
    age = read("age", need(given, "age"))
    sex = SEX.read("sex", need(given, "sex"))
    height = read("height", given["height"]) if "height" in given else None
    method = TBW_METHOD.read("tbw-method", given["tbw-method"]) if "tbw-method" in given else None
    if method == "watson" and height is None:
        raise InputError("height", None, "is required for the Watson formula", "a height in cm, or fraction")
    return EpisodePatient(
        label=str(given["label"]).strip() if "label" in given else None,
        weight_kg=weight,
        age_years=age,
        sex=sex,
        height_cm=height,
        tbw_method=method,
    )


def parse_lab(fields: Mapping[str, object]) -> LabEntry:
    """A lab entry from typed time and values (keys: time and the field table's labs); sodium is required."""
    given = given_fields(dict(fields))
    time = parse_time(given.get("time"))
    labs = parse_labs(given)
    return LabEntry(
        time=time,
        **{f.attr: labs.value(f.key) for f in LAB_FIELDS},
        entered={name: str(given[name]) for name in LAB_KEYS if name in given},
    )


def parse_dose_entry(formulary: Formulary, fields: Mapping[str, object]) -> DoseEntry:
    """A dose entry from typed time, agent, volume and optional duration; the agent must be in the formulary."""
    given = given_fields(dict(fields))
    time = parse_time(given.get("time"))
    agent = formulary.agent(str(need(given, "agent")).strip())
    volume = read("volume", need(given, "volume"))
    duration = read("duration", given["duration"]) if "duration" in given else None
    return DoseEntry(time=time, agent_id=agent.id, volume_ml=volume, duration_min=duration)


def parse_reading(fields: Mapping[str, object]) -> ReadingEntry:
    """A bedside reading from typed time, MAP and ICP (bare numbers in mmHg; kPa accepted)."""
    given = given_fields(dict(fields))
    time = parse_time(given.get("time"))
    values = {}
    for name in keys("reading"):
        values[name] = read(name, need(given, name))
    return ReadingEntry(time=time, map_mmhg=values["map"], icp_mmhg=values["icp"])
