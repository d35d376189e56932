"""The formulary file exactly as a unit writes it (TOML), as pydantic models.

These models describe the file, strings and all, so the JSON Schema made from
them checks a file in an editor.  Turning the strings into quantities and
cross-checking them happens in `load`; keys here are fixed because units
write files against them.  Unknown keys are rejected: a misspelt limit must
never silently fall back to its default.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any, Literal

from pydantic import BaseModel, ConfigDict, Field, create_model

from osmodose.formulary.limits import LIMIT_SPECS
from osmodose.science.chemistry import SoluteName
from osmodose.science.choices import EthanolFactor, TbwMethod

_STRICT = ConfigDict(extra="forbid", frozen=True, use_attribute_docstrings=True)


class FormularyHeader(BaseModel):
    """The `[formulary]` table: which file this is."""

    model_config = _STRICT

    name: str = Field(min_length=1)
    """The unit's name for this formulary, shown with every result."""
    version: str = Field(min_length=1)
    """The unit's version label, e.g. "2026-11" or "4.2"; bump it on every change."""


class SettingsTable(BaseModel):
    """The optional `[settings]` table: choices a unit makes once."""

    model_config = _STRICT

    elderly_age_years: float = Field(default=65.0, ge=40, le=100)
    """Age from which the elderly total-body-water fractions apply (sources say 65 or 70)."""
    adult_age_years: float = Field(default=18.0, ge=10, le=25)
    """Age below which the child fraction (0.6) applies to both sexes."""
    ethanol_factor: EthanolFactor = "molar"
    """Ethanol's share of calculated osmolality: "molar" (mg/dL / 4.6) or "empirical" (mg/dL / 3.7)."""
    tbw_method: TbwMethod = "fraction"
    """Default total-body-water method when the user does not choose one."""


def _limits_table() -> type[BaseModel]:
    """The `[limits]` table, one optional quantity string per `LIMIT_SPECS` entry, described by it."""
    fields: dict[str, Any] = {
        name: (str | None, Field(default=None, description=spec.describe())) for name, spec in LIMIT_SPECS.items()
    }
    return create_model(
        "LimitsTable",
        __config__=_STRICT,
        __doc__='The optional `[limits]` table; each value a quantity string such as "160 mmol/L".',
        **fields,
    )


if TYPE_CHECKING:

    class LimitsTable(BaseModel):
        """Generated from `LIMIT_SPECS` below; this stub only tells the type checker it is a model."""

else:
    LimitsTable = _limits_table()


class AgentEntry(BaseModel):
    """One `[[agents]]` table: a stock solution the unit keeps."""

    model_config = _STRICT

    id: str = Field(min_length=1, max_length=40, pattern=r"^[a-z0-9][a-z0-9._-]*$")
    """Short id typed with --agent: lower-case letters, digits, '.', '_' or '-'."""
    label: str = Field(min_length=1)
    """The name as printed on the unit's stock, e.g. "Sodium chloride 3 % 250 mL"."""
    solute: SoluteName
    """The solute whose molar mass turns the concentration into mmol and mOsm."""
    concentration: str | None = None
    """Concentration as labelled: "3% w/v", "234 g/L", "513 mmol/L" or "4 mEq/mL"; optional only for "mixed"."""
    route: Literal["central", "peripheral"]
    """"central" = central line only; "peripheral" = a peripheral or a central line."""
    presentations: list[str] = Field(default_factory=list)
    """Bag or vial sizes kept, e.g. ["250 mL", "500 mL"]."""
    dose_warn: str | None = None
    """Dose per kg above which an order is warned, e.g. "1 g/kg", "5 mL/kg", "2 mmol/kg"."""
    dose_refuse: str | None = None
    """Dose per kg above which an order is refused."""
    max_rate: str | None = None
    """Fastest accepted infusion rate, e.g. "1000 mL/h" or "2 mL/min"."""
    sodium: str | None = None
    """Sodium content as labelled, e.g. "130 mmol/L"; checked against the concentration."""
    potassium: str | None = None
    """Potassium content as labelled, e.g. "4 mmol/L"; counts in the sodium projection."""
    osmolarity: str | None = None
    """Theoretical osmolarity as labelled, e.g. "273 mOsm/L"; checked against the concentration."""
    codes: list[str] = Field(default_factory=list)
    """Medication codes the hospital's records give this stock, "system|code" (e.g. "http://example.org/stock|NACL3"):
    `course import` makes a FHIR MedicationAdministration with one of them a dose of this agent."""


class FormularyFile(BaseModel):
    """A whole formulary file."""

    model_config = _STRICT

    formulary: FormularyHeader
    """Name and version of this file."""
    settings: SettingsTable = Field(default_factory=SettingsTable)
    """Unit-wide choices (elderly age cut-off, ethanol factor, default TBW method)."""
    limits: LimitsTable = Field(default_factory=LimitsTable)
    """Safety limits; any left out takes its published or common-practice default."""
    agents: list[AgentEntry] = Field(min_length=1)
    """The stock solutions the unit keeps, one [[agents]] table each."""
