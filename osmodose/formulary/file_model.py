"""The formulary file exactly as a unit writes it (TOML), as pydantic models.

These models describe the file, strings and all, so the JSON Schema made from
them checks a file in an editor.  Turning the strings into quantities and
cross-checking them happens in `load`; keys here are fixed because units
write files against them.  Unknown keys are rejected: a misspelt limit must
never silently fall back to its default.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any, Literal

from pydantic import BaseModel, ConfigDict, Field, create_model, field_validator

from osmodose.formulary.limits import LIMIT_SPECS
from osmodose.science.chemistry import SoluteName
from osmodose.science.choices import EthanolFactor, TbwMethod
from osmodose.science.formulas import INFANT_AGE_YEARS, TBW_FRACTION_CHILD, TBW_FRACTION_INFANT

#: The route words of files written before they were renamed, read as the new ones.
OLD_ROUTE_WORDS: dict[str, str] = {"central": "central-only", "peripheral": "any-line"}

# Each field's docstring is its description in the template and the schema (`field_docs`); pydantic is not
# asked to collect them (`use_attribute_docstrings`), which would cost every check's start-up about 10 ms.
_STRICT = ConfigDict(extra="forbid", frozen=True)


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
    infant_age_years: float = Field(default=INFANT_AGE_YEARS, ge=0, le=3)
    """Age below which the infant total-body-water fraction applies (default 1 year)."""
    tbw_fraction_infant: float = Field(default=TBW_FRACTION_INFANT, ge=0.5, le=0.85)
    """Infants' body water per kg: 0.75-0.8 at birth, 0.6 by 1 year (Friis-Hansen 1961, from memory)."""
    tbw_fraction_child: float = Field(default=TBW_FRACTION_CHILD, ge=0.5, le=0.75)
    """Children's body water per kg, from the infant age to the adult age (Adrogue-Madias 2000)."""


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
    route: Literal["central-only", "any-line"]
    """"central-only" = a central line only; "any-line" = either line (old words "central"/"peripheral" warn)."""
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
    adult_only: bool = False
    """true: an order of this agent for a child (under the adult age setting) is refused."""
    dose_weight: Literal["actual", "ideal", "adjusted"] = "actual"
    """Weight for per-kg doses and limits: "actual" (default), "ideal" (Devine) or "adjusted"; needs a height."""
    codes: list[str] = Field(default_factory=list)
    """Medication codes the hospital's records give this stock, "system|code" (e.g. "http://example.org/stock|NACL3"):
    `course import` makes a FHIR MedicationAdministration with one of them a dose of this agent."""

    @field_validator("route", mode="before")
    @classmethod
    def _old_route_words(cls, value: object) -> object:
        """Read the old words ("central", "peripheral") as the new ones; `formulary validate` warns of them."""
        return OLD_ROUTE_WORDS.get(value, value) if isinstance(value, str) else value


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
