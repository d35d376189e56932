"""A labs file into an episode: every final Observation and given dose becomes an entry, none twice.

`course import FILE BUNDLE`: Observations drawn at one time become one lab
entry (an episode's lab entry needs a sodium), MAP and ICP read at one time one
reading, and each MedicationAdministration whose medication code the formulary
maps to an agent (`codes = ["system|code"]`) one dose.  Each entry keeps the
FHIR resource it came from (`sources`, `source`), so importing the same file
again adds nothing; a value already in the episode at the same time under the
same field is not added either.  The episode is only ever appended to: an
entry already there is never changed, and an Observation changed since it was
imported is reported, not applied.  Everything not imported is listed.

`lab_from_file` is `course add-lab --labs`: one lab entry, at the sodium's time.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from datetime import datetime

from osmodose.case.fields import FIELDS, LAB_KEYS, read
from osmodose.case.inputs import given_fields
from osmodose.course.entries import parse_lab
from osmodose.course.episode import DoseEntry, Episode, LabEntry, ReadingEntry
from osmodose.datain import FhirFile, Measured, case_from_file, read_labs_file, when
from osmodose.errors import InputError
from osmodose.formulary.model import Formulary


@dataclass
class ImportReport:
    """What an import added and, one line each, what it did not."""

    labs: int = 0
    doses: int = 0
    readings: int = 0
    already: int = 0
    lines: list[str] = field(default_factory=list)

    @property
    def added(self) -> int:
        return self.labs + self.doses + self.readings


def lab_from_file(typed: Mapping[str, object], path: str, now: datetime) -> tuple[LabEntry, list[str]]:
    """`course add-lab --labs`: the file's newest final labs (typed values win), at the sodium's time.

    Labs drawn at another time than the entry's are left out and listed
    (`course import` adds each time as its own entry).
    """
    given = given_fields(dict(typed))
    fields, data_in = case_from_file(
        {k: v for k, v in given.items() if k != "time"}, read_labs_file(path), now, LAB_KEYS
    )
    lines = list(data_in.ignored)
    sodium = data_in.origin("sodium")
    if "time" in given:
        time_raw: object = given["time"]
    elif sodium is not None and sodium.source == "file" and sodium.effective_time is not None:
        time_raw = sodium.effective_time
    else:
        raise InputError("time", None, "is required: the sodium was typed, so the file cannot give its time")
    entry_fields: dict[str, object] = {"time": time_raw}
    sources: dict[str, str] = {}
    entered: dict[str, str] = {}
    at = parse_lab({"time": time_raw, "sodium": 140}).time
    for key in LAB_KEYS:
        if key not in fields or fields[key] is None:
            continue
        origin = data_in.origin(key)
        if origin is not None and origin.source == "file":
            if origin.effective_time != at:
                drawn = when(origin.effective_time) if origin.effective_time else "an unknown time"
                lines.append(
                    f"{origin.resource} ({key}): drawn at {drawn}, not with the entry at {when(at)}; not added "
                    "(course import adds each time)"
                )
                continue
            sources[key] = origin.resource or ""
            entered[key] = origin.shown
        else:
            entered[key] = str(fields[key])
        entry_fields[key] = fields[key]
    entry = parse_lab(entry_fields)
    return entry.model_copy(update={"entered": entered, "sources": sources}), lines


def _known_sources(episode: Episode) -> dict[str, tuple[str, float | None]]:
    """Every FHIR resource already in the episode, with the field and value it gave."""
    known: dict[str, tuple[str, float | None]] = {}
    for lab in episode.labs:
        for key, resource in lab.sources.items():
            known[resource] = (key, lab.value(FIELDS[key].into or key))
    for reading in episode.readings:
        for key, resource in reading.sources.items():
            known[resource] = (key, getattr(reading, FIELDS[key].attr))
    for dose in episode.doses:
        if dose.source:
            known[dose.source] = ("dose", dose.volume_ml)
    return known


def import_file(episode: Episode, file: FhirFile, formulary: Formulary) -> tuple[Episode, ImportReport]:
    """`episode` with every new entry the file gives, and the report; the episode itself is not changed."""
    report = ImportReport(lines=list(file.ignored))
    known = _known_sources(episode)
    labs: dict[datetime, dict[str, Measured]] = {}
    readings: dict[datetime, dict[str, Measured]] = {}
    for measured in file.measured:
        if not _usable(measured, known, report) or measured.time is None:
            continue
        group = FIELDS[measured.key].group
        target = FIELDS[measured.key].into or measured.key
        if group == "labs":
            slot = labs.setdefault(measured.time, {})
        elif group == "reading":
            slot = readings.setdefault(measured.time, {})
        else:
            report.lines.append(f"{measured.label()}: the patient's {measured.key} is kept by course new; not imported")
            continue
        if target in slot:
            report.lines.append(
                f"{measured.label()}: {slot[target].resource} gives the same field at the same time; not imported"
            )
            continue
        slot[target] = measured
    new_labs = _lab_entries(episode, labs, report)
    new_readings = _reading_entries(episode, readings, report)
    new_doses = _dose_entries(episode, file, formulary, known, report)
    data = episode.model_dump()
    data["labs"] = [*data["labs"], *(e.model_dump() for e in new_labs)]
    data["readings"] = [*data["readings"], *(e.model_dump() for e in new_readings)]
    data["doses"] = [*data["doses"], *(e.model_dump() for e in new_doses)]
    report.labs, report.readings, report.doses = len(new_labs), len(new_readings), len(new_doses)
    return Episode.model_validate(data), report


def _usable(measured: Measured, known: dict[str, tuple[str, float | None]], report: ImportReport) -> bool:
    if measured.resource in known:
        _, kept = known[measured.resource]
        value = measured.value
        if measured.problem is None and kept is not None and value is not None and not _same(kept, value):
            report.lines.append(
                f"{measured.label()}: now {measured.shown}, changed since it was imported; the episode keeps "
                "the value imported first: check it"
            )
            return False
        report.already += 1
        return False
    if not measured.final:
        report.lines.append(f"{measured.label()}: status {measured.status}, not final; not imported")
        return False
    if measured.problem is not None:
        accepted = f" (accepted: {measured.accepted})" if measured.accepted else ""
        report.lines.append(f"{measured.label()}: {measured.problem}{accepted}; not imported")
        return False
    if measured.time is None:
        report.lines.append(f"{measured.label()}: has no effective time; not imported")
        return False
    return True


def _same(kept: float, value: float) -> bool:
    return abs(kept - value) <= 1e-9 * max(1.0, abs(kept))


def _taken(episode: Episode, time: datetime, key: str) -> bool:
    """Whether the episode already holds field `key` at `time` (typed or imported)."""
    target = FIELDS[key].into or key
    if FIELDS[target].group == "labs":
        return any(lab.time == time and lab.value(target) is not None for lab in episode.labs)
    return any(reading.time == time for reading in episode.readings)


def _lab_entries(episode: Episode, labs: dict[datetime, dict[str, Measured]], report: ImportReport) -> list[LabEntry]:
    entries = []
    for time in sorted(labs):
        slot = labs[time]
        if any(lab.time == time for lab in episode.labs):
            for measured in slot.values():
                report.lines.append(
                    f"{measured.label()}: the episode already has labs at {when(time)}; not merged (entries are "
                    "never changed)"
                )
            continue
        if "sodium" not in slot:
            for measured in slot.values():
                report.lines.append(
                    f"{measured.label()}: no final sodium at {when(time)}, and a lab entry needs one; not imported"
                )
            continue
        fields: dict[str, object] = {"time": time}
        for measured in slot.values():
            fields[measured.key] = measured.quantity
        try:
            entry = parse_lab(fields)
        except InputError as error:  # two forms of one lab together (urea and BUN) and the like
            report.lines.append(f"labs at {when(time)}: {error}; not imported")
            continue
        entries.append(
            entry.model_copy(
                update={
                    "entered": {m.key: m.shown for m in slot.values()},
                    "sources": {m.key: m.resource for m in slot.values()},
                }
            )
        )
    return entries


def _reading_entries(
    episode: Episode, readings: dict[datetime, dict[str, Measured]], report: ImportReport
) -> list[ReadingEntry]:
    entries = []
    for time in sorted(readings):
        slot = readings[time]
        if _taken(episode, time, "map"):
            for measured in slot.values():
                report.lines.append(
                    f"{measured.label()}: the episode already has a reading at {when(time)}; not imported"
                )
            continue
        if set(slot) != {"map", "icp"}:
            for measured in slot.values():
                report.lines.append(
                    f"{measured.label()}: a reading needs MAP and ICP at the same time ({when(time)}); not imported"
                )
            continue
        entries.append(
            ReadingEntry(
                time=time,
                map_mmhg=read("map", slot["map"].quantity),
                icp_mmhg=read("icp", slot["icp"].quantity),
                sources={key: m.resource for key, m in slot.items()},
            )
        )
    return entries


def _dose_entries(
    episode: Episode,
    file: FhirFile,
    formulary: Formulary,
    known: dict[str, tuple[str, float | None]],
    report: ImportReport,
) -> list[DoseEntry]:
    entries = []
    for given in file.administered:
        if given.resource in known:
            report.already += 1
            continue
        if given.status != "completed":
            report.lines.append(f"{given.resource}: status {given.status}, not completed; not imported")
            continue
        if given.problem is not None or given.time is None:
            report.lines.append(f"{given.resource}: {given.problem or 'has no effective time'}; not imported")
            continue
        agent = formulary.agent_for_codes(given.codes)
        if agent is None:
            codes = ", ".join(given.codes) or "none"
            report.lines.append(
                f"{given.resource}: medication {codes} is not mapped to an agent (codes in the formulary); not imported"
            )
            continue
        if given.dose is None or not given.dose.check("[volume]"):
            report.lines.append(
                f"{given.resource}: dose {given.dose_shown or 'not given'} is not a volume; not imported"
            )
            continue
        if any(d.time == given.time and d.agent_id == agent.id for d in episode.doses):
            report.lines.append(
                f"{given.resource}: the episode already has {agent.id} at {when(given.time)}; not imported"
            )
            continue
        try:
            volume = read("volume", given.dose)
            duration = read("duration", given.duration_min) if given.duration_min is not None else None
        except InputError as error:
            report.lines.append(f"{given.resource}: {error}; not imported")
            continue
        entries.append(
            DoseEntry(
                time=given.time, agent_id=agent.id, volume_ml=volume, duration_min=duration, source=given.resource
            )
        )
    return entries
