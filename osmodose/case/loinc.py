"""LOINC codes: how a hospital's records name what osmodose reads, declared once, on the field table's rows.

Each `CaseField` in `fields.py` lists its codes (`loinc=`); the FHIR reader
(`osmodose.datain`) maps an Observation to a field by them and nothing else.
Every code says where it was seen: in public FHIR value sets (the domain
reference, section 11), in a public FHIR profile's bindings, or only recalled
("memory", to be re-read against LOINC before a unit relies on it).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

LOINC_SYSTEM = "http://loinc.org"

Provenance = Literal["value set", "profile", "memory"]


@dataclass(frozen=True)
class Loinc:
    """One LOINC code of a field: the code, LOINC's name for it, and where the code was seen."""

    code: str
    component: str
    provenance: Provenance
    where: str = ""


def value_set(code: str, component: str) -> Loinc:
    """A code seen in public FHIR value sets (domain reference, section 11)."""
    return Loinc(code, component, "value set", "public FHIR value sets (domain reference, section 11)")


def memory(code: str, component: str) -> Loinc:
    """A code recalled, not re-read at its source: say so wherever it is shown."""
    return Loinc(code, component, "memory", "from memory, not re-read in LOINC")


def profile(code: str, component: str) -> Loinc:
    """A code seen in the bindings of a public FHIR ICU profile (Medical Informatics Initiative, ICU module)."""
    return Loinc(code, component, "profile", "a public FHIR ICU profile's bindings (Medical Informatics Initiative)")


#: Codes of fields other work adds to the table (the urine fields of the urine-loss projection):
#: field key -> codes. When those rows land in `fields.FIELDS`, move each code onto its row
#: (`loinc=`) and delete it here; until then the FHIR reader names them and keeps no value.
PENDING: dict[str, tuple[str, tuple[Loinc, ...]]] = {
    "urine-sodium": ("urine sodium", (value_set("2955-3", "Sodium [Moles/volume] in Urine"),)),
    "urine-potassium": ("urine potassium", (value_set("2828-2", "Potassium [Moles/volume] in Urine"),)),
    "urine-osmolality": ("urine osmolality", (memory("2695-5", "Osmolality of Urine"),)),
}
