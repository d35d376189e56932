"""The dosing engine: whole columns of cases in, whole columns of figures out.

A single `osmodose check` is a batch of one, so a check and a row of an audit
go through exactly the same lines of code and cannot disagree.  Every column
is a 1-d numpy array of plain floats in the canonical unit its name says (kg,
years, cm, mmol/L, mOsm/kg, mL, min): units were read and checked at the
edges, so nothing here builds a pint quantity.  NaN in an input column means
"not given", NaN in an output column "cannot be computed".  Agents are
columns too, gathered from the formulary by index.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from osmodose.formulary.file_model import SettingsTable
from osmodose.formulary.model import Agent
from osmodose.science import formulas as f

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

    agents: tuple[Agent, ...]
    index: np.ndarray
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
        agents = tuple(agents)

        def column(values: list[float | None]) -> np.ndarray:
            return np.asarray([np.nan if v is None else v for v in values] + [np.nan], dtype=float)[index]

        def flags(values: list[bool]) -> np.ndarray:
            return np.asarray([*values, False], dtype=bool)[index]

        return cls(
            agents=agents,
            index=index,
            has_agent=index >= 0,
            solute_g_per_l=column([a.solute_g_per_l for a in agents]),
            sodium_mmol_l=column([a.sodium_mmol_l for a in agents]),
            cations_mmol_l=column([a.cations_mmol_l for a in agents]),
            osmolarity_mosm_l=column([a.osmolarity_mosm_l for a in agents]),
            projects_sodium=flags([a.projects_sodium for a in agents]),
            is_mannitol=flags([a.solute == "mannitol" for a in agents]),
            central_only=flags([a.route == "central" for a in agents]),
        )

    def column(self, pick: Callable[[Agent], float | None]) -> np.ndarray:
        """Any agent property per case: NaN where the agent has none, or there is no agent."""
        table = [np.nan if (v := pick(a)) is None else float(v) for a in self.agents]
        return np.asarray([*table, np.nan], dtype=float)[self.index]


@dataclass(frozen=True)
class Cases:
    """The inputs of n cases in canonical units, NaN where not given.

    `labs` holds one column per lab of the field table (`fields.LAB_FIELDS`),
    keyed by field key ("sodium", "glucose", ...), in mmol/L (osmolality mOsm/kg).
    """

    weight_kg: np.ndarray
    age_years: np.ndarray
    male: np.ndarray
    height_cm: np.ndarray
    labs: Mapping[str, np.ndarray]
    agent_index: np.ndarray
    dose_unit: np.ndarray  # strings from DOSE_UNITS, or their indexes
    dose_amount: np.ndarray
    dose_per_kg: np.ndarray
    duration_min: np.ndarray
    use_watson: np.ndarray
    #: Hours from the sodium's draw to the check, where a labs file gave the time; None or NaN: not known.
    sodium_age_h: np.ndarray | None = None

    def __len__(self) -> int:
        return int(np.size(self.male))

    @property
    def sodium(self) -> np.ndarray:
        return self.labs["sodium"]

    @property
    def potassium(self) -> np.ndarray:
        return self.labs["potassium"]

    @property
    def osmolality(self) -> np.ndarray:
        return self.labs["osmolality"]


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
    fraction = f.tbw_fraction(cases.age_years, cases.male, settings.elderly_age_years, settings.adult_age_years)
    by_fraction = f.tbw_from_fraction(cases.weight_kg, fraction)
    watson = f.tbw_watson(cases.age_years, cases.height_cm, cases.weight_kg, cases.male)
    return np.asarray(np.where(cases.use_watson, watson, by_fraction), dtype=float)


def dose_volume_ml(cases: Cases, agent: AgentColumns, tbw_l: np.ndarray) -> np.ndarray:
    """The volume each dose request comes to; NaN where it cannot be had.

    A request in mmol is of sodium, so it needs a sodium-containing agent; one
    in grams needs a single solute; a target change needs the sodium projection.
    """
    amount = np.where(cases.dose_per_kg, cases.dose_amount * cases.weight_kg, cases.dose_amount)
    unit = dose_unit_codes(cases.dose_unit)
    by_grams = f.volume_for_amount(amount, agent.solute_g_per_l)
    by_mmol = f.volume_for_amount(amount, np.where(agent.sodium_mmol_l > 0, agent.sodium_mmol_l, np.nan))
    by_mosm = f.volume_for_amount(amount, np.where(agent.osmolarity_mosm_l > 0, agent.osmolarity_mosm_l, np.nan))
    cations = np.where(agent.projects_sodium, agent.cations_mmol_l, np.nan)
    by_rise = f.volume_for_sodium_change(cases.sodium, cations, tbw_l, cases.dose_amount) * f.ML_PER_L
    volume = np.select(
        [unit == _UNIT_ML, unit == _UNIT_G, unit == _UNIT_MMOL, unit == _UNIT_MOSM, unit == _UNIT_RISE],
        [amount, by_grams, by_mmol, by_mosm, by_rise],
        default=np.nan,
    )
    return np.where(agent.has_agent, np.atleast_1d(volume).astype(float), np.nan)


def compute(cases: Cases, agents: Sequence[Agent], settings: SettingsTable) -> Figures:
    """All figures for all cases."""
    agent = AgentColumns.gather(agents, cases.agent_index)
    labs = cases.labs
    tbw_l = total_body_water(cases, settings)
    factor = f.ETHANOL_FACTOR_EMPIRICAL if settings.ethanol_factor == "empirical" else f.ETHANOL_FACTOR_MOLAR
    ethanol = np.nan_to_num(labs["ethanol"], nan=0.0)
    calculated = np.asarray(
        f.calculated_osmolality(cases.sodium, labs["glucose"], labs["urea"], ethanol, factor), dtype=float
    )
    effective = np.asarray(f.effective_osmolality(cases.sodium, labs["glucose"]), dtype=float)
    gap = np.asarray(f.osmolar_gap(cases.osmolality, calculated), dtype=float)

    volume_ml = dose_volume_ml(cases, agent, tbw_l)
    weight = cases.weight_kg
    solute_g = np.asarray(f.amount_in_volume(volume_ml, agent.solute_g_per_l), dtype=float)
    sodium_mmol = np.asarray(f.amount_in_volume(volume_ml, agent.sodium_mmol_l), dtype=float)
    osmoles = np.asarray(f.amount_in_volume(volume_ml, agent.osmolarity_mosm_l), dtype=float)
    duration = np.where(cases.duration_min > 0, cases.duration_min, np.nan)
    rate = np.asarray(f.infusion_rate(volume_ml, duration), dtype=float)

    cations = np.where(agent.projects_sodium, agent.cations_mmol_l, np.nan)
    per_litre = np.asarray(f.sodium_change_per_litre(cases.sodium, cations, tbw_l), dtype=float)
    projected = np.asarray(f.projected_sodium(cases.sodium, cations, tbw_l, volume_ml / f.ML_PER_L), dtype=float)
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
        projected_rise=projected - cases.sodium,
    )
