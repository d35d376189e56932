"""From what a file holds to the values of one case: the newest final value of each field, typed values on top.

Rules, the same for `check`, `verify`, `course add-lab` and the app:

* a value typed (command line, form) wins over the file's, and the result says
  which file value it replaced;
* of a field's Observations, only final, amended and corrected ones count; the
  newest of those is the file's value (two different values at the same time
  are refused, not guessed between);
* if that newest value cannot be used (wrong dimension, a unit that is not
  UCUM, no value, no time, implausible) the case stops with a `LabsFileError`
  naming the resource, the LOINC code and the field: an older value is never
  used in its place without saying so;
* age and sex come from the Patient resource when not typed: age at the
  sodium's effective time, sex only when the administrative gender is male or
  female (anything else must be confirmed by typing it).

Everything not used is listed, one line each, in `DataIn.ignored`.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from datetime import UTC, date, datetime

from osmodose.case.fields import FIELDS, read
from osmodose.case.inputs import given_fields
from osmodose.case.provenance import DataIn, FieldOrigin
from osmodose.datain.fhir import FhirFile, Measured, PatientFacts
from osmodose.errors import InputError, LabsFileError, resource_label
from osmodose.science.choices import SEX

#: A sample may carry a time up to this many hours after the clock of the check (clocks differ a little).
CLOCK_TOLERANCE_H = 5 / 60


@dataclass(frozen=True)
class Chosen:
    """The file's value of one field (or its typed replacement) and the lines about the others."""

    winner: Measured | None
    lines: tuple[str, ...]


def when(moment: datetime) -> str:
    """A time as results show it: `2026-12-01 08:30 +01:00`."""
    return moment.strftime("%Y-%m-%d %H:%M %z")[:-2] + ":" + moment.strftime("%z")[-2:]


def choose(file: FhirFile, members: tuple[str, ...], typed: bool) -> Chosen:
    """The newest final Observation among the fields `members` (urea and BUN give one lab), and what is not used."""
    candidates = [m for m in file.measured if m.key in members]
    lines = [f"{m.label()}: status {m.status}, not final; ignored" for m in candidates if not m.final]
    finals = sorted((m for m in candidates if m.final), key=_order, reverse=True)
    if not finals:
        return Chosen(None, tuple(lines))
    winner = finals[0]
    same_time = [m for m in finals[1:] if m.time == winner.time]
    if not typed and any(m.value != winner.value or m.problem or winner.problem for m in same_time):
        other = same_time[0]
        raise LabsFileError(
            file.path,
            f"gives {winner.shown or 'no value'} and {other.resource} gives {other.shown or 'no value'} at the same "
            "time: which one is meant cannot be told",
            winner.resource,
            winner.loinc,
            winner.key,
        )
    for older in finals[1:]:
        if older.problem and older not in same_time:
            lines.append(f"{older.label()}: {older.problem}; ignored (a newer value is used)")
    return Chosen(winner, tuple(lines))


def _order(measured: Measured) -> datetime:
    return measured.time or datetime.min.replace(tzinfo=UTC)


def _age_h(file: FhirFile, measured: Measured, at: datetime) -> float | None:
    if measured.time is None:
        return None
    hours = (at - measured.time).total_seconds() / 3600
    if hours < -CLOCK_TOLERANCE_H:
        raise LabsFileError(
            file.path,
            f"was drawn at {when(measured.time)}, after the time of the check ({when(at)})",
            measured.resource,
            measured.loinc,
            measured.key,
        )
    return max(hours, 0.0)


def case_from_file(
    typed: Mapping[str, object], file: FhirFile, at: datetime, keys: Iterable[str]
) -> tuple[dict[str, object], DataIn]:
    """The case's fields (typed text, with the file's values where nothing was typed) and where each came from.

    `keys` are the field table keys the case takes (a check: patient and labs).
    File values are pint quantities, read by `fields.read` exactly as typed text.
    """
    given = given_fields(dict(typed))
    wanted = [k for k in keys if FIELDS[k].loinc]
    groups: dict[str, tuple[str, ...]] = {}
    for key in wanted:
        target = FIELDS[key].into or key
        groups[target] = (*groups.get(target, ()), key)
    fields: dict[str, object] = dict(typed)
    origins: dict[str, FieldOrigin] = {}
    ignored = list(file.ignored)
    sodium_time: datetime | None = None
    for target, members in groups.items():
        typed_keys = [k for k in members if k in given]
        chosen = choose(file, members, bool(typed_keys))
        ignored += chosen.lines
        winner = chosen.winner
        if typed_keys:
            key = typed_keys[0]
            replaced = None
            if winner is not None and winner.problem is None:
                replaced = f"{winner.shown} ({winner.resource}" + (f", {when(winner.time)})" if winner.time else ")")
            elif winner is not None:
                ignored.append(f"{winner.label()}: {winner.problem}; not used (typed)")
            origins[key] = FieldOrigin(field=key, source="typed", shown=str(given[key]), replaced=replaced)
            continue
        if winner is None:
            _no_final(file, target, members)
            continue
        if winner.problem is not None:
            raise LabsFileError(file.path, winner.problem, winner.resource, winner.loinc, winner.key, winner.accepted)
        fields[winner.key] = winner.quantity
        if target == "sodium":
            sodium_time = winner.time
        origins[winner.key] = FieldOrigin(
            field=winner.key,
            source="file",
            shown=winner.shown,
            resource=winner.resource,
            loinc=winner.loinc,
            effective_time=winner.time,
            date_only=winner.date_only,
            age_h=_age_h(file, winner, at),
        )
    keys_wanted = set(keys)
    if file.patient is not None:
        if "age" in keys_wanted:
            _age(fields, origins, given, file, file.patient, sodium_time or at)
        if "sex" in keys_wanted:
            _sex(fields, origins, given, file.patient)
    order = list(FIELDS)
    data_in = DataIn(
        path=file.path,
        sha256=file.sha256,
        at=at,
        fields=tuple(sorted(origins.values(), key=lambda o: order.index(o.field))),
        ignored=tuple(ignored),
    )
    return fields, data_in


def _no_final(file: FhirFile, target: str, members: tuple[str, ...]) -> None:
    """A required field the file gives only as not-final values: say so, rather than only "is required"."""
    if not FIELDS[target].required:
        return
    pending = [m for m in file.measured if m.key in members and not m.final]
    if pending:
        newest = max(pending, key=_order)
        raise LabsFileError(
            file.path,
            f"status {newest.status}, not final: the file has no final {FIELDS[target].label}",
            newest.resource,
            newest.loinc,
            newest.key,
        )


def age_years(born: date, at: date) -> float:
    """Age in years on `at`: whole years by the calendar, then the share of the year since the last birthday."""
    years = at.year - born.year - ((at.month, at.day) < (born.month, born.day))
    last = _birthday(born, born.year + years)
    following = _birthday(born, born.year + years + 1)
    return years + (at - last).days / (following - last).days


def _birthday(born: date, year: int) -> date:
    try:
        return born.replace(year=year)
    except ValueError:  # 29 February in a common year: the 28th
        return date(year, 2, 28)


def _age(
    fields: dict[str, object],
    origins: dict[str, FieldOrigin],
    given: dict[str, object],
    file: FhirFile,
    patient: PatientFacts,
    at: datetime,
) -> None:
    source = f"birth date {patient.birth_text}" if patient.birth_text else "no birth date"
    if "age" in given:
        replaced = None
        if patient.birth_date is not None and at.date() >= patient.birth_date:
            replaced = f"{age_years(patient.birth_date, at.date()):.2f} y ({patient.resource} {source})"
        origins["age"] = FieldOrigin(field="age", source="typed", shown=str(given["age"]), replaced=replaced)
        return
    if patient.birth_date is None:
        if patient.birth_text:
            raise LabsFileError(
                file.path, f"birthDate {patient.birth_text} is not a whole date: type the age", patient.resource
            )
        return
    years = age_years(patient.birth_date, at.date()) if at.date() >= patient.birth_date else -1.0
    try:
        read("age", years)
    except InputError as error:
        raise LabsFileError(
            file.path, f"{source} gives an age that {error.problem}", patient.resource, None, "age", error.accepted
        ) from None
    fields["age"] = years
    origins["age"] = FieldOrigin(
        field="age",
        source="file",
        shown=f"{years:.2f} y ({source}, on {at.date().isoformat()})",
        resource=patient.resource,
    )


def _sex(
    fields: dict[str, object], origins: dict[str, FieldOrigin], given: dict[str, object], patient: PatientFacts
) -> None:
    gender = patient.gender
    if "sex" in given:
        replaced = f"gender {gender} ({patient.resource})" if gender else None
        origins["sex"] = FieldOrigin(field="sex", source="typed", shown=str(given["sex"]), replaced=replaced)
        return
    if gender in SEX.values:
        fields["sex"] = gender
        origins["sex"] = FieldOrigin(field="sex", source="file", shown=f"gender {gender}", resource=patient.resource)
        return
    raise InputError(
        "sex",
        None,
        f"is not known: {resource_label(patient.resource)} has the administrative gender "
        f"{gender or 'unset'}; confirm the sex for the total-body-water formulas",
        SEX.accepted(),
    )
