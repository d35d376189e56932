"""The result of one check, as frozen models; `to_json` gives the public shape.

Field names carry their unit (`volume_ml`, `osmolar_gap_mosm_kg`) so a script
reading the JSON never has to guess; a figure that cannot be computed is None
(null), never 0.  `to_json` rounds every figure once, to the decimals
`science.precision` declares for it; the models keep full precision.
"""

from __future__ import annotations

from typing import Any, Literal

from pydantic import Field

from osmodose.case.provenance import DataIn
from osmodose.caution import CAUTION
from osmodose.check.judging import Severity, Status
from osmodose.formulary.model import Formulary, FormularyIdentity
from osmodose.frozen import Frozen
from osmodose.science.precision import round_document


class Finding(Frozen):
    """One safety rule that fired."""

    code: str
    severity: Severity
    message: str
    value: float | None
    limit: float | None
    unit: str


class FormularyRef(FormularyIdentity):
    """Which formulary file a result came from: the formulary's identity without its contents."""

    @classmethod
    def of(cls, formulary: Formulary) -> FormularyRef:
        """The reference every result carries to the formulary it was worked with."""
        return cls(**{name: getattr(formulary, name) for name in FormularyIdentity.model_fields})

    def line(self) -> str:
        """The line every report heads with: which file, which version, which bytes."""
        return f"formulary: {self.name} v{self.version} sha256 {self.sha256}"


class PatientFigures(Frozen):
    weight_kg: float
    age_years: float
    sex: Literal["female", "male"]
    height_cm: float | None
    total_body_water_l: float
    tbw_method: Literal["fraction", "watson", "apparent"]
    bmi_kg_m2: float | None = None
    """Body mass index, kg/m^2, when a height is given."""


class PresentationFit(Frozen):
    """How a volume is made up from one bag or vial size: one alternative, not a part of a combination."""

    size_ml: float
    containers: int
    discard_ml: float


class DoseFigures(Frozen):
    agent: str
    agent_label: str
    requested: str
    """The order as asked for, its style first: "dose 1g/kg", "target-sodium 134 (a change of +6.0 mmol/L)"."""
    mode: Literal["dose", "volume", "target-rise", "target-sodium"] = "dose"
    """The style the order was asked in (the first word of `requested`)."""
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
    dose_weight: Literal["actual", "ideal", "adjusted"] = "actual"
    """The weight the per-kg figures use: the agent's `dose_weight` (always actual for a child)."""
    dosing_weight_kg: float | None = None
    osmolar_rate_mosm_kg_min: float | None = None
    """Osmoles per kg per minute: what the default rate limits judge (null without a duration)."""


class CorrectedSodium(Frozen):
    """Serum sodium corrected for high glucose, mmol/L, by each published factor."""

    katz: float
    """1.6 mmol/L per 100 mg/dL of glucose above 100 mg/dL (Katz MA. N Engl J Med 1973)."""
    hillier: float
    """2.4 mmol/L per 100 mg/dL of glucose above 100 mg/dL (Hillier TA et al. Am J Med 1999)."""


class RiseBudget(Frozen):
    """How much of the 24 h rise limits an order uses, where they apply (a starting sodium below 135)."""

    rise_mmol_l: float
    """This order's projected rise."""
    already_used_mmol_l: float | None = None
    """The rise already measured in the 24 h before, when a course is open (else null)."""
    total_mmol_l: float
    """Already used plus this order."""
    warn_mmol_l: float | None
    refuse_mmol_l: float | None
    """The refuse limit in force: the high-risk one at high risk of osmotic demyelination."""
    high_risk: bool
    target_low_mmol_l: float | None
    target_high_mmol_l: float | None
    """The goal band shown (4-8 mmol/L in 24 h; 4-6 at high risk: Verbalis 2013)."""


class AgentVolume(Frozen):
    """One agent of the formulary and a volume of it (equiosmolar, or for a sodium change)."""

    agent: str
    volume_ml: float | None


class CheckResult(Frozen):
    """Everything one check found; `status` is the worst finding's severity."""

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
    corrected_sodium_mmol_l: CorrectedSodium | None = None
    """Sodium corrected for glucose (null without a glucose); equal to the measured at or below 100 mg/dL."""
    sodium_rise_budget: RiseBudget | None = None
    """The order's share of the 24 h rise limits, where they apply (null otherwise)."""
    labs_file: DataIn | None = None
    """The labs file the case was read from: each value's resource, effective time and age; null when typed."""
    # The projection with urine losses, its range, free water and equiosmolar volumes (see check.balance).
    urine: dict[str, float | None] | None = None
    projected_sodium_without_losses_mmol_l: float | None = None
    projected_sodium_range_mmol_l: tuple[float, float] | None = None
    electrolyte_free_water_clearance_l: float | None = None
    free_water_deficit_l: float | None = None
    volumes_for_daily_fall: list[AgentVolume] = Field(default_factory=list)
    equiosmolar: list[AgentVolume] | None = None

    def to_json(self) -> dict[str, Any]:
        """The public JSON object (plain types only), every figure rounded as declared."""
        document: dict[str, Any] = round_document(self.model_dump(mode="json"))
        return document
