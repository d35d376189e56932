"""The result of one check, as frozen models; `to_json` gives the public shape.

Field names carry their unit (`volume_ml`, `osmolar_gap_mosm_kg`) so a script
reading the JSON never has to guess; a figure that cannot be computed is None
(null), never 0.
"""

from __future__ import annotations

from typing import Any, Literal

from pydantic import BaseModel, ConfigDict

from osmodose.case.provenance import DataIn
from osmodose.caution import CAUTION
from osmodose.formulary.model import Formulary

_FROZEN = ConfigDict(frozen=True)

Severity = Literal["warn", "refuse"]
Status = Literal["ok", "warn", "refuse"]


class Finding(BaseModel):
    """One safety rule that fired."""

    model_config = _FROZEN

    code: str
    severity: Severity
    message: str
    value: float | None
    limit: float | None
    unit: str


class FormularyRef(BaseModel):
    """Which formulary file a result came from."""

    model_config = _FROZEN

    name: str
    version: str
    sha256: str
    path: str

    @classmethod
    def of(cls, formulary: Formulary) -> FormularyRef:
        return cls(name=formulary.name, version=formulary.version, sha256=formulary.sha256, path=formulary.path)

    def line(self) -> str:
        """The line every report heads with: which file, which version, which bytes."""
        return f"formulary: {self.name} v{self.version} sha256 {self.sha256}"


class PatientFigures(BaseModel):
    model_config = _FROZEN

    weight_kg: float
    age_years: float
    sex: Literal["female", "male"]
    height_cm: float | None
    total_body_water_l: float
    tbw_method: Literal["fraction", "watson"]


class PresentationFit(BaseModel):
    """How a volume is made up from one bag or vial size."""

    model_config = _FROZEN

    size_ml: float
    containers: int
    discard_ml: float


class DoseFigures(BaseModel):
    model_config = _FROZEN

    agent: str
    agent_label: str
    requested: str
    volume_ml: float
    solute_g: float | None
    sodium_mmol: float
    osmoles_mosm: float
    volume_ml_per_kg: float
    solute_g_per_kg: float | None
    sodium_mmol_per_kg: float
    rate_ml_h: float | None
    duration_min: float | None
    presentations: list[PresentationFit]


class CheckResult(BaseModel):
    """Everything one check found; `status` is the worst finding's severity."""

    model_config = _FROZEN

    status: Status
    findings: list[Finding]
    notes: list[str]
    formulary: FormularyRef
    patient: PatientFigures
    labs: dict[str, float | None]
    line: Literal["central", "peripheral"] | None
    calculated_osmolality_mosm_kg: float | None
    effective_osmolality_mosm_kg: float | None
    osmolar_gap_mosm_kg: float | None
    dose: DoseFigures | None
    sodium_change_per_litre_mmol_l: float | None
    projected_sodium_mmol_l: float | None
    projected_sodium_rise_mmol_l: float | None
    program_version: str
    caution: str = CAUTION
    labs_file: DataIn | None = None
    """The labs file the case was read from: each value's resource, effective time and age; null when typed."""

    def to_json(self) -> dict[str, Any]:
        """The public JSON object (plain types only)."""
        return self.model_dump(mode="json")
