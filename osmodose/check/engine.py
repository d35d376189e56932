"""The dosing engine: whole columns of cases in, whole columns of figures out.

A single `osmodose check` is a batch of one, so a check and a row of an audit
go through exactly the same lines of code and cannot disagree.  Every column
is a 1-d numpy array (wrapped in a pint quantity where it has a unit); NaN in
an input column means "not given", NaN in an output column "cannot be
computed".  Agents are columns too, gathered from the formulary by index.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from osmodose.formulary.file_model import SettingsTable
from osmodose.formulary.model import Agent
from osmodose.science import formulas as f
from osmodose.science.units import Q_, Quantity

#: Codes of the dose units in `Cases.dose_unit`.
DOSE_UNITS: tuple[str, ...] = ("", "g", "mL", "mmol", "mOsm", "mmol/L")
_UNIT_G, _UNIT_ML, _UNIT_MMOL, _UNIT_MOSM, _UNIT_RISE = range(1, len(DOSE_UNITS))


def dose_unit_codes(units: np.ndarray) -> np.ndarray:
    """Indexes into DOSE_UNITS: `Cases.dose_unit` may hold the strings or (for big batches) the indexes."""
    units = np.asarray(units)
    if units.dtype.kind in "iu":
        return units
    codes = np.zeros(units.shape, dtype=np.int8)
    for code, unit in enumerate(DOSE_UNITS[1:], start=1):
        codes[units == unit] = code
    return codes


@dataclass(frozen=True)
class AgentColumns:
    """The agent of each case, one array per property (NaN/False for no agent)."""

    has_agent: np.ndarray
    solute_g_per_l: np.ndarray
    sodium_mmol_l: np.ndarray
    cations_mmol_l: np.ndarray
    osmolarity_mosm_l: np.ndarray
    projects_sodium: np.ndarray
    is_mannitol: np.ndarray
    central_only: np.ndarray

    @classmethod
    def gather(cls, agents: Sequence[Agent], index: np.ndarray) -> AgentColumns:
        """Columns for `index` into `agents`; -1 means no agent (the NaN/False appended to each table)."""
        index = np.asarray(index, dtype=np.int64)
        has = index >= 0

        def column(values: list[float], empty: float = np.nan) -> np.ndarray:
            return np.asarray([*values, empty], dtype=float)[index]

        def flags(values: list[bool]) -> np.ndarray:
            return np.asarray([*values, False], dtype=bool)[index]

        return cls(
            has_agent=has,
            solute_g_per_l=column([np.nan if a.solute_g_per_l is None else a.solute_g_per_l for a in agents]),
            sodium_mmol_l=column([a.sodium_mmol_l for a in agents]),
            cations_mmol_l=column([a.cations_mmol_l for a in agents]),
            osmolarity_mosm_l=column([a.osmolarity_mosm_l for a in agents]),
            projects_sodium=flags([a.projects_sodium for a in agents]),
            is_mannitol=flags([a.solute == "mannitol" for a in agents]),
            central_only=flags([a.route == "central" for a in agents]),
        )


@dataclass(frozen=True)
class Cases:
    """The inputs of n cases, canonical units, NaN where not given."""

    weight: Quantity
    age: Quantity
    male: np.ndarray
    height: Quantity
    sodium: Quantity
    potassium: Quantity
    glucose: Quantity
    urea: Quantity
    ethanol: Quantity
    osmolality: Quantity
    agent_index: np.ndarray
    dose_unit: np.ndarray  # strings from DOSE_UNITS, or their indexes
    dose_amount: np.ndarray
    dose_per_kg: np.ndarray
    duration_min: np.ndarray
    use_watson: np.ndarray

    def __len__(self) -> int:
        return int(np.size(self.male))


@dataclass(frozen=True)
class Figures:
    """Every computed column, canonical units, NaN where it cannot be computed."""

    tbw_l: np.ndarray
    calculated_osmolality: np.ndarray
    effective_osmolality: np.ndarray
    osmolar_gap: np.ndarray
    volume_ml: np.ndarray
    solute_g: np.ndarray
    sodium_mmol: np.ndarray
    osmoles_mosm: np.ndarray
    volume_ml_per_kg: np.ndarray
    solute_g_per_kg: np.ndarray
    sodium_mmol_per_kg: np.ndarray
    osmoles_mosm_per_kg: np.ndarray
    rate_ml_h: np.ndarray
    sodium_change_per_litre: np.ndarray
    projected_sodium: np.ndarray
    projected_rise: np.ndarray


def total_body_water(cases: Cases, settings: SettingsTable) -> np.ndarray:
    """TBW in litres: Watson where asked (and height given), else the fractions."""
    fraction = f.tbw_fraction(cases.age.m_as("year"), cases.male, settings.elderly_age_years, settings.adult_age_years)
    by_fraction = f.tbw_from_fraction(cases.weight, fraction).m_as("L")
    watson = f.tbw_watson(cases.age, cases.height, cases.weight, cases.male).m_as("L")
    return np.where(cases.use_watson, watson, by_fraction)


def dose_volume_ml(cases: Cases, agent: AgentColumns, tbw_l: np.ndarray) -> np.ndarray:
    """The volume each dose request comes to; NaN where it cannot be had.

    A request in mmol is of sodium, so it needs a sodium-containing agent; one
    in grams needs a single solute; a target change needs the sodium projection.
    """
    weight = cases.weight.m_as("kg")
    amount = np.where(cases.dose_per_kg, cases.dose_amount * weight, cases.dose_amount)
    unit = dose_unit_codes(cases.dose_unit)
    with np.errstate(divide="ignore", invalid="ignore"):
        by_grams = f.volume_for_amount(Q_(amount, "g"), Q_(agent.solute_g_per_l, "g/L")).m_as("mL")
        sodium = np.where(agent.sodium_mmol_l > 0, agent.sodium_mmol_l, np.nan)
        by_mmol = f.volume_for_amount(Q_(amount, "mmol"), Q_(sodium, "mmol/L")).m_as("mL")
        osmolarity = np.where(agent.osmolarity_mosm_l > 0, agent.osmolarity_mosm_l, np.nan)
        by_mosm = f.volume_for_amount(Q_(amount, "mOsm"), Q_(osmolarity, "mOsm/L")).m_as("mL")
    cations = np.where(agent.projects_sodium, agent.cations_mmol_l, np.nan)
    by_rise = f.volume_for_sodium_change(
        cases.sodium, Q_(cations, "mmol/L"), Q_(tbw_l, "L"), Q_(cases.dose_amount, "mmol/L")
    ).m_as("mL")
    volume = np.select(
        [unit == _UNIT_ML, unit == _UNIT_G, unit == _UNIT_MMOL, unit == _UNIT_MOSM, unit == _UNIT_RISE],
        [amount, by_grams, by_mmol, by_mosm, by_rise],
        default=np.nan,
    )
    return np.where(agent.has_agent, np.atleast_1d(volume).astype(float), np.nan)


def compute(cases: Cases, agents: Sequence[Agent], settings: SettingsTable) -> Figures:
    """All figures for all cases."""
    agent = AgentColumns.gather(agents, cases.agent_index)
    tbw_l = total_body_water(cases, settings)
    factor = f.ETHANOL_FACTOR_EMPIRICAL if settings.ethanol_factor == "empirical" else f.ETHANOL_FACTOR_MOLAR
    ethanol = Q_(np.nan_to_num(cases.ethanol.m_as("mmol/L"), nan=0.0), "mmol/L")
    calculated = f.calculated_osmolality(cases.sodium, cases.glucose, cases.urea, ethanol, factor).m_as("mOsm/kg")
    effective = f.effective_osmolality(cases.sodium, cases.glucose).m_as("mOsm/kg")
    gap = f.osmolar_gap(cases.osmolality, Q_(calculated, "mOsm/kg")).m_as("mOsm/kg")

    volume_ml = dose_volume_ml(cases, agent, tbw_l)
    volume = Q_(volume_ml, "mL")
    weight = cases.weight.m_as("kg")
    solute_g = f.amount_in_volume(volume, Q_(agent.solute_g_per_l, "g/L"), "g").m_as("g")
    sodium_mmol = f.amount_in_volume(volume, Q_(agent.sodium_mmol_l, "mmol/L"), "mmol").m_as("mmol")
    osmoles = f.amount_in_volume(volume, Q_(agent.osmolarity_mosm_l, "mOsm/L"), "mOsm").m_as("mOsm")
    with np.errstate(divide="ignore", invalid="ignore"):
        duration = np.where(cases.duration_min > 0, cases.duration_min, np.nan)
    rate = f.infusion_rate(volume, Q_(duration, "min")).m_as("mL/h")

    cations = Q_(np.where(agent.projects_sodium, agent.cations_mmol_l, np.nan), "mmol/L")
    tbw = Q_(tbw_l, "L")
    per_litre = f.sodium_change_per_litre(cases.sodium, cations, tbw).m_as("mmol/L")
    projected = f.projected_sodium(cases.sodium, cations, tbw, volume).m_as("mmol/L")
    rise = projected - cases.sodium.m_as("mmol/L")
    return Figures(
        tbw_l=tbw_l,
        calculated_osmolality=calculated,
        effective_osmolality=effective,
        osmolar_gap=gap,
        volume_ml=volume_ml,
        solute_g=solute_g,
        sodium_mmol=sodium_mmol,
        osmoles_mosm=osmoles,
        volume_ml_per_kg=volume_ml / weight,
        solute_g_per_kg=solute_g / weight,
        sodium_mmol_per_kg=sodium_mmol / weight,
        osmoles_mosm_per_kg=osmoles / weight,
        rate_ml_h=rate,
        sodium_change_per_litre=per_litre,
        projected_sodium=projected,
        projected_rise=rise,
    )
