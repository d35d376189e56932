"""The formulary file exactly as a unit writes it (TOML), as pydantic models.

These models describe the file, strings and all, so the JSON Schema made from
them checks a file in an editor.  Turning the strings into quantities and
cross-checking them happens in `resolve`; keys here are fixed because units
write files against them.  Unknown keys are rejected: a misspelt limit must
never silently fall back to its default.
"""

from __future__ import annotations

from typing import Literal

from pydantic import BaseModel, ConfigDict, Field

from osmodose.science.chemistry import SoluteName

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
    ethanol_factor: Literal["molar", "empirical"] = "molar"
    """Ethanol's share of calculated osmolality: "molar" (mg/dL / 4.6) or "empirical" (mg/dL / 3.7)."""
    tbw_method: Literal["fraction", "watson"] = "fraction"
    """Default total-body-water method when the user does not choose one."""


class LimitsTable(BaseModel):
    """The optional `[limits]` table; each value a quantity string such as "160 mmol/L"."""

    model_config = _STRICT

    sodium_warn: str | None = None
    """Serum sodium (current or projected) above which an order is warned; default 155 mmol/L."""
    sodium_refuse: str | None = None
    """Serum sodium (current or projected) above which an order is refused; default 160 mmol/L."""
    osmolality_warn: str | None = None
    """Serum osmolality above which an order is warned; default 310 mOsm/kg."""
    osmolality_refuse: str | None = None
    """Serum osmolality above which an order is refused; default 320 mOsm/kg."""
    osmolar_gap_warn: str | None = None
    """Osmolar gap above which mannitol is warned; default 10 mOsm/kg."""
    osmolar_gap_refuse: str | None = None
    """Osmolar gap above which mannitol is refused; default 20 mOsm/kg."""
    osmolar_gap_negative_warn: str | None = None
    """How far measured osmolality may fall below calculated before a warning; default 10 mOsm/kg."""
    sodium_rise_24h_warn: str | None = None
    """Sodium rise within 24 h above which an order is warned; default 8 mmol/L."""
    sodium_rise_24h_refuse: str | None = None
    """Sodium rise within 24 h above which an order is refused; default 10 mmol/L."""
    sodium_rise_applies_below: str | None = None
    """Starting sodium below which the 24 h rise limits apply; default 135 mmol/L."""
    sodium_rise_24h_high_risk_refuse: str | None = None
    """Rise within 24 h refused for high risk of osmotic demyelination; default 8 mmol/L."""
    sodium_fall_24h_warn: str | None = None
    """Sodium fall within 24 h above which an order is warned; default 10 mmol/L."""
    sodium_fall_24h_refuse: str | None = None
    """Sodium fall within 24 h above which an order is refused; default 12 mmol/L."""
    sodium_low_warn: str | None = None
    """Projected sodium below which an order that lowers sodium is warned; default 130 mmol/L."""
    sodium_low_refuse: str | None = None
    """Projected sodium below which an order that lowers sodium is refused; default 125 mmol/L."""
    peripheral_osmolarity_warn: str | None = None
    """Infusate osmolarity above which a peripheral line is warned; default 900 mOsm/L."""
    dose_tolerance: str | None = None
    """Accepted difference between a stated and a recomputed dose; default "10 %"."""
    sodium_tolerance: str | None = None
    """Accepted difference between a stated expected sodium and the projected one; default 2 mmol/L."""
    lab_max_age: str | None = None
    """Age of labs beyond which they are too old to dose on; default "6 h"."""
    icp_treat_above: str | None = None
    """Intracranial pressure above which treatment is indicated; default 22 mmHg."""
    cpp_target_min: str | None = None
    """Cerebral perfusion pressure below which a reading is warned; default 60 mmHg."""
    osmolar_gap_rise_warn: str | None = None
    """Rise of the osmolar gap between labs after mannitol that is warned; default 10 mOsm/kg."""
    mannitol_24h_max: str | None = None
    """Cumulative mannitol in 24 h above which a dose is warned, e.g. "2 g/kg"; no default."""


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
