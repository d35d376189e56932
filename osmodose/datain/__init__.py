"""Data in from the hospital: HL7 FHIR R4 labs files read into the values of a case or a course.

`read_labs_file` reads a Bundle, a single resource or NDJSON (`files`),
validates each resource with the FHIR models and turns Observations into
field values by LOINC code and UCUM unit (`fhir`); `case_from_file` picks the
newest final value of each field, lets typed values win and says where each
value came from (`choose`).  The FHIR models are imported on the first file
read, never at start-up.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from datetime import datetime
from pathlib import Path

from osmodose.case.provenance import DataIn
from osmodose.datain.choose import age_years, case_from_file, when
from osmodose.datain.fhir import Administered, FhirFile, Measured, PatientFacts, read_fhir
from osmodose.datain.files import read_raw

__all__ = [
    "Administered",
    "DataIn",
    "FhirFile",
    "Measured",
    "PatientFacts",
    "age_years",
    "case_from_file",
    "read_labs_file",
    "when",
    "with_labs_file",
]


def read_labs_file(path: Path | str) -> FhirFile:
    """Every resource of a FHIR R4 JSON or NDJSON file, validated and read; LabsFileError when it cannot be."""
    return read_fhir(read_raw(path))


def with_labs_file(
    typed: Mapping[str, object], path: Path | str, at: datetime, keys: Iterable[str]
) -> tuple[dict[str, object], DataIn]:
    """`typed` with the file's values added where nothing was typed, and the origin of each (see `choose`)."""
    return case_from_file(typed, read_labs_file(path), at, tuple(keys))
