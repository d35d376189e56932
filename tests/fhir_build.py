"""FHIR R4 resources built by the tests, in the shape of the specification's published examples.

The shape (code.coding with system http://loinc.org, valueQuantity with system
http://unitsofmeasure.org and a UCUM code, effectiveDateTime with its offset,
subject) follows the R4 examples kept in tests/data/fhir (see its README); the
patients and values are invented test data.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

LOINC = "http://loinc.org"
UCUM = "http://unitsofmeasure.org"
STOCK = "http://example.org/fhir/stock-codes"
DATA = Path(__file__).resolve().parent / "data" / "fhir"


def spec_example(name: str) -> dict[str, Any]:
    """One of the published R4 examples kept in tests/data/fhir."""
    data: dict[str, Any] = json.loads((DATA / name).read_text(encoding="utf-8"))
    return data


def observation(
    ident: str,
    loinc: str,
    value: float | None,
    code: str | None,
    time: str | None,
    status: str = "final",
    subject: str | None = "Patient/p1",
    **extra: Any,
) -> dict[str, Any]:
    resource: dict[str, Any] = {
        "resourceType": "Observation",
        "id": ident,
        "status": status,
        "code": {"coding": [{"system": LOINC, "code": loinc}]},
    }
    if subject:
        resource["subject"] = {"reference": subject}
    if time:
        resource["effectiveDateTime"] = time
    if value is not None:
        quantity: dict[str, Any] = {"value": value, "unit": code or ""}
        if code is not None:
            quantity.update(system=UCUM, code=code)
        resource["valueQuantity"] = quantity
    resource.update(extra)
    return resource


def patient(ident: str = "p1", gender: str | None = "female", birth: str | None = "1976-03-01") -> dict[str, Any]:
    resource: dict[str, Any] = {"resourceType": "Patient", "id": ident}
    if gender:
        resource["gender"] = gender
    if birth:
        resource["birthDate"] = birth
    return resource


def administration(
    ident: str,
    code: str,
    start: str,
    end: str | None,
    volume_ml: float,
    status: str = "completed",
    subject: str = "Patient/p1",
) -> dict[str, Any]:
    effective: dict[str, Any] = (
        {"effectivePeriod": {"start": start, "end": end}} if end else {"effectiveDateTime": start}
    )
    return {
        "resourceType": "MedicationAdministration",
        "id": ident,
        "status": status,
        "medicationCodeableConcept": {"coding": [{"system": STOCK, "code": code}]},
        "subject": {"reference": subject},
        **effective,
        "dosage": {"dose": {"value": volume_ml, "unit": "mL", "system": UCUM, "code": "mL"}},
    }


def bundle(*resources: dict[str, Any]) -> dict[str, Any]:
    return {"resourceType": "Bundle", "type": "collection", "entry": [{"resource": r} for r in resources]}


def write(path: Path, document: dict[str, Any] | list[dict[str, Any]]) -> Path:
    """A JSON file, or NDJSON for a list of resources."""
    if isinstance(document, list):
        path.write_text("".join(json.dumps(r) + "\n" for r in document), encoding="utf-8")
    else:
        path.write_text(json.dumps(document, indent=1), encoding="utf-8")
    return path


#: A set of labs drawn together at 08:30 (+01:00), with the patient: the typed check below gives the same case.
DRAWN = "2026-12-01T08:30:00+01:00"
AT = "2026-12-01T10:00+01:00"


def morning_labs() -> list[dict[str, Any]]:
    return [
        patient(),
        observation("wt-1", "29463-7", 143, "[lb_av]", "2026-11-30T20:00:00+01:00"),
        observation("na-1", "2951-2", 128, "mmol/L", "2026-12-01T02:30:00+01:00"),
        observation("na-2", "2951-2", 130, "meq/L", DRAWN),
        observation("k-1", "2823-3", 3.9, "mmol/L", DRAWN),
        observation("glu-1", "2345-7", 126, "mg/dL", DRAWN),
        observation("bun-1", "3094-0", 14, "mg/dL", DRAWN),
        observation("osm-1", "2692-2", 285, "mosm/kg{H2O}", DRAWN),
    ]


#: The same case typed by hand: 143 lb, age at the sodium's time (born 1976-03-01), female.
TYPED_SAME = [
    "--weight", "143lb", "--age", "50.75342465753425", "--sex", "female", "--sodium", "130", "--potassium", "3.9",
    "--glucose", "126mg/dL", "--bun", "14", "--osmolality", "285",
]  # fmt: skip
