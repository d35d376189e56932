"""FHIR R4 resources into plain records: each Observation's field, value, time and status; the Patient; doses.

Every resource osmodose reads (Observation, Patient, MedicationAdministration,
Medication) is validated by the HL7 FHIR models of `fhir.resources` (BSD, on
pydantic 2). Its R4B models read R4 JSON for these four resources, which R4B
did not change (from memory of the R4B change list). The library takes about
half a second to import, so it is imported here, on the first file read, and
only the modules of the resource types the file holds.

An Observation is matched to a field by its LOINC code alone (`fields.LOINC_FIELDS`),
and its value is converted through the UCUM code its `valueQuantity` carries
(`science.ucum`), then read by `fields.read` like typed text: same units, same
plausible range.  What cannot be used is kept with the reason, one line each.
"""

from __future__ import annotations

import importlib
from dataclasses import dataclass
from datetime import UTC, date, datetime, time
from decimal import Decimal
from typing import Any

from pint.errors import PintError
from pydantic import ValidationError

from osmodose.case.fields import FIELDS, LOINC_FIELDS, read
from osmodose.case.loinc import LOINC_SYSTEM, PENDING
from osmodose.datain.files import RawFile, RawResource
from osmodose.errors import InputError, LabsFileError, resource_label
from osmodose.science.ucum import UCUM_SYSTEM, UcumError, ucum_unit
from osmodose.science.units import Quantity

#: Statuses whose value may be used (FHIR R4 observation-status: the result is complete and verified).
FINAL = ("final", "amended", "corrected")
#: MedicationAdministration statuses that are a dose given.
GIVEN = ("completed",)
READ_TYPES = ("Observation", "Patient", "MedicationAdministration", "Medication")
_PENDING_BY_CODE = {code.code: (key, name) for key, (name, codes) in PENDING.items() for code in codes}


@dataclass(frozen=True)
class Measured:
    """One Observation (or one component of it) with a LOINC code osmodose knows, or the line saying why not.

    `key` is the field it gives; `quantity` the value with its unit; `problem`
    why the value cannot be used (with `accepted`, what would be).
    """

    resource: str
    resource_id: str | None
    loinc: str
    key: str
    status: str
    time: datetime | None
    date_only: bool
    shown: str
    quantity: Quantity | None
    value: float | None
    problem: str | None = None
    accepted: str | None = None

    @property
    def final(self) -> bool:
        return self.status in FINAL

    def label(self) -> str:
        return resource_label(self.resource, self.loinc, self.key)


@dataclass(frozen=True)
class PatientFacts:
    """The Patient resource: administrative gender and birth date as written."""

    resource: str
    gender: str | None
    birth_date: date | None
    birth_text: str | None


@dataclass(frozen=True)
class Administered:
    """One MedicationAdministration: its medication codes ("system|code"), when, how much, over how long."""

    resource: str
    resource_id: str | None
    status: str
    codes: tuple[str, ...]
    time: datetime | None
    dose: Quantity | None
    dose_shown: str
    duration_min: float | None
    problem: str | None = None


@dataclass(frozen=True)
class FhirFile:
    """What a labs file holds, read and validated; nothing chosen yet."""

    path: str
    sha256: str
    measured: tuple[Measured, ...]
    patient: PatientFacts | None
    administered: tuple[Administered, ...]
    ignored: tuple[str, ...]


def _model(kind: str) -> Any:
    module = importlib.import_module(f"fhir.resources.R4B.{kind.lower()}")
    return getattr(module, kind)


def _validated(raw_file: RawFile, raw: RawResource) -> Any:
    try:
        return _model(raw.kind).model_validate(raw.data)
    except ValidationError as error:
        first = error.errors()[0]
        where = ".".join(str(part) for part in first.get("loc", ()))
        message = str(first.get("msg", "")).removeprefix("Value error, ").split("\n")[0].strip()
        detail = f"{where}: {message}" if where else message
        raise LabsFileError(raw_file.path, f"is not a valid FHIR R4 {raw.kind}: {detail}", raw.name) from None


def read_fhir(raw_file: RawFile) -> FhirFile:
    """Validate and read every resource of a file; raises LabsFileError for an invalid one or mixed patients."""
    ignored = list(raw_file.ignored)
    measured: list[Measured] = []
    administered: list[Administered] = []
    patients: list[tuple[RawResource, Any]] = []
    medications: dict[str, Any] = {}
    subjects: dict[str, str] = {}
    pending_doses: list[tuple[RawResource, Any]] = []
    for raw in raw_file.resources:
        if raw.kind not in READ_TYPES:
            ignored.append(f"{raw.name}: resource type {raw.kind} is not read; ignored")
            continue
        model = _validated(raw_file, raw)
        if raw.kind == "Patient":
            patients.append((raw, model))
        elif raw.kind == "Medication":
            for key in (f"Medication/{model.id}", raw.full_url):
                if key:
                    medications[key] = model
        else:
            subject = model.subject.reference if model.subject is not None else None
            if subject:
                subjects.setdefault(subject, raw.name)
            if raw.kind == "Observation":
                measured += _observation(raw, model, ignored)
            else:
                pending_doses.append((raw, model))
    for raw, model in pending_doses:
        administered.append(_administration(raw, model, medications))
    patient = _patient(raw_file, patients, subjects)
    return FhirFile(str(raw_file.path), raw_file.sha256, tuple(measured), patient, tuple(administered), tuple(ignored))


def _patient(
    raw_file: RawFile, patients: list[tuple[RawResource, Any]], subjects: dict[str, str]
) -> PatientFacts | None:
    """The one Patient, after checking that every resource is about one patient (never mix two records)."""
    if len(patients) > 1:
        names = ", ".join(raw.name for raw, _ in patients)
        raise LabsFileError(raw_file.path, f"holds more than one Patient ({names}): one patient per file")
    known: set[str] = set()
    facts = None
    if patients:
        raw, model = patients[0]
        known = {f"Patient/{model.id}", raw.full_url or ""} - {""}
        birth = model.birthDate
        facts = PatientFacts(
            raw.name,
            model.gender,
            birth if isinstance(birth, date) else None,
            None if birth is None else str(birth),
        )
    others = sorted({ref for ref in subjects if ref not in known and not any(ref.endswith("/" + k) for k in known)})
    if (known and others) or len(others) > 1:
        listed = ", ".join(sorted(known)[:1] + others)
        raise LabsFileError(
            raw_file.path, f"holds resources about more than one patient ({listed}): one patient per file"
        )
    return facts


def _codings(concept: Any) -> list[tuple[str, str]]:
    if concept is None or not concept.coding:
        return []
    return [(c.system or "", c.code or "") for c in concept.coding]


def _observation(raw: RawResource, model: Any, ignored: list[str]) -> list[Measured]:
    """The measured values of one Observation: its own value, and any component with a known code."""
    status = str(model.status)
    when, date_only = _effective(model)
    parts = [(raw.name, model.code, model)]
    for component in model.component or ():
        codes = [code for system, code in _codings(component.code) if system == LOINC_SYSTEM]
        parts.append((f"{raw.name} component {codes[0] if codes else '?'}", component.code, component))
    found = []
    for name, concept, holder in parts:
        loincs = [code for system, code in _codings(concept) if system == LOINC_SYSTEM]
        known = [code for code in loincs if code in LOINC_FIELDS]
        if not known:
            if (
                holder is model
                and model.component
                and any(
                    code in LOINC_FIELDS for c in model.component for s, code in _codings(c.code) if s == LOINC_SYSTEM
                )
            ):
                continue  # a panel: its components are read
            ignored.append(_not_read(name, loincs))
            continue
        field, _ = LOINC_FIELDS[known[0]]
        found.append(_measure(name, raw, known[0], field.key, status, when, date_only, holder))
    return found


def _not_read(name: str, loincs: list[str]) -> str:
    if not loincs:
        return f"{name}: no LOINC code; ignored"
    pending = [code for code in loincs if code in _PENDING_BY_CODE]
    if pending:
        key, what = _PENDING_BY_CODE[pending[0]]
        return f"{resource_label(name, pending[0], key)}: osmodose keeps no {what} yet; ignored"
    return f"{resource_label(name, loincs[0])}: not a code osmodose reads; ignored"


def _effective(model: Any) -> tuple[datetime | None, bool]:
    """The effective time (dateTime, instant or the start of a period); a date alone is 00:00 UTC."""
    value = model.effectiveDateTime or model.effectiveInstant
    if value is None and model.effectivePeriod is not None:
        value = model.effectivePeriod.start
    if isinstance(value, datetime):
        return value, False
    if isinstance(value, date):
        return datetime.combine(value, time(0, 0), tzinfo=UTC), True
    return None, False


def _number(value: Decimal | float | int) -> str:
    return format(Decimal(str(value)).normalize(), "f") if not isinstance(value, float) else f"{value:g}"


def _measure(
    name: str,
    raw: RawResource,
    loinc: str,
    key: str,
    status: str,
    when: datetime | None,
    date_only: bool,
    holder: Any,
) -> Measured:
    field = FIELDS[key]
    resource_id = raw.data.get("id") if isinstance(raw.data.get("id"), str) else None

    def measured(shown: str, problem: str | None, accepted: str | None = None, quantity: Any = None) -> Measured:
        value = None
        if problem is None and quantity is not None:
            try:
                value = read(key, quantity, shown)
            except InputError as error:
                problem, accepted, quantity = f"{shown} {error.problem}", error.accepted, None
        return Measured(
            name, resource_id, loinc, key, status, when, date_only, shown, quantity, value, problem, accepted
        )

    accepted = " or ".join(field.examples)
    value_quantity = holder.valueQuantity
    if value_quantity is None or value_quantity.value is None:
        if value_quantity is None and _has_other_value(holder):
            return measured("", "has a value that is not a quantity")
        absent = holder.dataAbsentReason
        why = (absent.text or next((c for _, c in _codings(absent)), "")) if absent is not None else ""
        return measured("", "has no value" + (f" ({why})" if why else ""))
    number = _number(value_quantity.value)
    code = value_quantity.code
    shown = f"{number} {code or value_quantity.unit or ''}".strip()
    if value_quantity.comparator:
        return measured(shown, f"is a bound ({value_quantity.comparator}{number}), not a value")
    if value_quantity.system != UCUM_SYSTEM or not code:
        unit = value_quantity.unit or code or "none"
        return measured(shown, f"has no UCUM unit code (unit {unit!r})", accepted)
    if when is None and field.group == "labs":
        return measured(shown, "has no effective time")
    try:
        unit_quantity = ucum_unit(code)
    except UcumError as error:
        return measured(shown, f"unit {code!r} {error.problem}", accepted)
    return measured(shown, None, quantity=float(value_quantity.value) * unit_quantity)


def _has_other_value(holder: Any) -> bool:
    names = ("valueCodeableConcept", "valueString", "valueBoolean", "valueInteger", "valueRange", "valueRatio")
    return any(getattr(holder, name, None) is not None for name in names)


def _administration(raw: RawResource, model: Any, medications: dict[str, Any]) -> Administered:
    codes = [f"{s}|{c}" for s, c in _codings(model.medicationCodeableConcept)]
    reference = model.medicationReference.reference if model.medicationReference is not None else None
    problem = None
    if reference:
        medication = None
        if reference.startswith("#"):
            medication = next((c for c in model.contained or () if getattr(c, "id", None) == reference[1:]), None)
        else:
            medication = medications.get(reference)
        if medication is None:
            problem = f"its medication {reference} is not in the file"
        else:
            codes += [f"{s}|{c}" for s, c in _codings(medication.code)]
    start = end = None
    if model.effectiveDateTime is not None:
        start = model.effectiveDateTime
    elif model.effectivePeriod is not None:
        start, end = model.effectivePeriod.start, model.effectivePeriod.end
    when = start if isinstance(start, datetime) else None
    dose = None
    dose_shown = ""
    duration = None
    dosage = model.dosage
    if dosage is not None and dosage.dose is not None and dosage.dose.value is not None:
        dose_shown = f"{_number(dosage.dose.value)} {dosage.dose.code or dosage.dose.unit or ''}".strip()
        if dosage.dose.system == UCUM_SYSTEM and dosage.dose.code:
            try:
                dose = float(dosage.dose.value) * ucum_unit(dosage.dose.code)
            except UcumError as error:
                problem = problem or f"dose unit {dosage.dose.code!r} {error.problem}"
        else:
            problem = problem or f"dose {dose_shown} has no UCUM unit code"
    if isinstance(end, datetime) and when is not None and end > when:
        duration = (end - when).total_seconds() / 60
    elif dosage is not None and dosage.rateQuantity is not None and dose is not None:
        rate = dosage.rateQuantity
        if rate.system == UCUM_SYSTEM and rate.code and rate.value:
            try:
                duration = float((dose / (float(rate.value) * ucum_unit(rate.code))).m_as("min"))
            except (UcumError, ValueError, TypeError, ArithmeticError, PintError):
                duration = None
    if when is None and problem is None:
        problem = "has no effective time"
    resource_id = raw.data.get("id") if isinstance(raw.data.get("id"), str) else None
    return Administered(
        raw.name, resource_id, str(model.status), tuple(codes), when, dose, dose_shown, duration, problem
    )
