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
from dataclasses import dataclass, field

import numpy as np

from osmodose.check.judging import threshold, threshold_below
from osmodose.formulary.file_model import SettingsTable
from osmodose.formulary.limits import Limits, default_limits
from osmodose.formulary.model import Agent
from osmodose.science import formulas as f
from osmodose.science.ranges import TBW_SHARE_OF_WEIGHT

#: The weights a per-kg dose can be worked on (an agent's `dose_weight`), by code.
DOSE_WEIGHTS: tuple[str, ...] = ("actual", "ideal", "adjusted")

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
    adult_only: np.ndarray
    dose_weight_code: np.ndarray  # index into DOSE_WEIGHTS: the weight a per-kg dose uses

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
            central_only=flags([a.central_only for a in agents]),
            adult_only=flags([a.adult_only for a in agents]),
            dose_weight_code=np.asarray([*(DOSE_WEIGHTS.index(a.dose_weight) for a in agents), 0], dtype=np.int8)[
                index
            ],
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
    raised_icp: np.ndarray | None = None  # None: no case has raised intracranial pressure
    #: Hours from the sodium's draw to the check, where a labs file gave the time; None or NaN: not known.
    sodium_age_h: np.ndarray | None = None
    #: Urine passed over the infusion's period, keyed by field key ("urine-volume" mL, "urine-sodium" and
    #: "urine-potassium" mmol/L), NaN where not given; a key left out is not given for any case.
    urine: Mapping[str, np.ndarray] = field(default_factory=dict)
    #: A total body water to use instead of the estimate (a course's apparent TBW), litres; NaN or None: estimate.
    tbw_override_l: np.ndarray | None = None

    def __len__(self) -> int:
        return int(np.size(self.male))

    def urine_column(self, key: str) -> np.ndarray:
        """One urine column ("urine-volume", "urine-sodium", "urine-potassium"), all NaN when not given."""
        column = self.urine.get(key)
        return np.full(len(self), np.nan) if column is None else np.asarray(column, dtype=float)

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
    # Added for the patient's own figures and for judging every rate.
    corrected_sodium_katz: np.ndarray
    corrected_sodium_hillier: np.ndarray
    bmi: np.ndarray
    dosing_weight_kg: np.ndarray
    osmoles_mosm_per_kg_min: np.ndarray
    # With urine given, `projected_sodium` and `projected_rise` are the full balance (losses taken out);
    # this is the infusate alone, as without urine.
    projected_sodium_without_losses: np.ndarray
    #: The projected range (see `projection_range`), mmol/L.
    projected_sodium_low: np.ndarray
    projected_sodium_high: np.ndarray
    #: The total body water the range spans, litres.
    tbw_low_l: np.ndarray
    tbw_high_l: np.ndarray
    #: The other method's TBW the range also spans (Watson against the fractions), NaN where none.
    tbw_other_l: np.ndarray
    #: Electrolyte-free water in the urine given, litres over its period (NaN without urine).
    free_water_clearance_l: np.ndarray
    #: Free-water deficit where sodium is above `free_water_deficit_above`, litres (NaN otherwise).
    free_water_deficit_l: np.ndarray


def tbw_estimates(cases: Cases, settings: SettingsTable) -> tuple[np.ndarray, np.ndarray]:
    """(TBW used, the other method's TBW) in litres.

    Used: a given override (a course's apparent TBW), else Watson where asked
    (and height given), else the fractions.  Other: Watson for an adult with
    a height when the fractions are used, the fractions when Watson is, NaN
    where there is none (no height, a child, an override, or a Watson result
    outside the share of body weight a body can hold).
    """
    fraction = f.tbw_fraction(
        cases.age_years,
        cases.male,
        settings.elderly_age_years,
        settings.adult_age_years,
        settings.infant_age_years,
        settings.tbw_fraction_infant,
        settings.tbw_fraction_child,
    )
    by_fraction = np.asarray(f.tbw_from_fraction(cases.weight_kg, fraction), dtype=float)
    watson = np.asarray(f.tbw_watson(cases.age_years, cases.height_cm, cases.weight_kg, cases.male), dtype=float)
    estimate = np.where(cases.use_watson, watson, by_fraction)
    low, high = TBW_SHARE_OF_WEIGHT
    with np.errstate(invalid="ignore", divide="ignore"):
        share = watson / cases.weight_kg
        watson_fits = (cases.age_years >= settings.adult_age_years) & (low <= share) & (share <= high)
    other = np.where(cases.use_watson, by_fraction, np.where(watson_fits, watson, np.nan))
    override = cases.tbw_override_l
    if override is None:
        return np.asarray(estimate, dtype=float), np.asarray(other, dtype=float)
    given = ~np.isnan(override)
    return np.where(given, override, estimate), np.where(given, np.nan, other)


def total_body_water(cases: Cases, settings: SettingsTable) -> np.ndarray:
    """TBW in litres: an override where given, Watson where asked (and height given), else the fractions."""
    return tbw_estimates(cases, settings)[0]


def dosing_weight(cases: Cases, agent: AgentColumns, adult_age: float) -> np.ndarray:
    """The weight each case's per-kg dose and per-kg figures use, kg: its agent's `dose_weight`.

    "actual" (the default, and always for a child or with no order) is the weight
    given; "ideal" is the Devine ideal weight, never above the actual one;
    "adjusted" is ideal + 0.4 x the excess, for a patient above the ideal weight
    (common practice).  Both need a height (NaN without one: `run_check` asks
    for it first).
    """
    weight = cases.weight_kg
    ideal = np.asarray(f.ideal_body_weight(cases.height_cm, cases.male), dtype=float)
    adjusted = np.where(weight > ideal, f.adjusted_body_weight(weight, ideal), weight)
    adult = ~(np.asarray(cases.age_years) < adult_age)
    code = agent.dose_weight_code
    return np.asarray(
        np.select([adult & (code == 1), adult & (code == 2)], [np.minimum(weight, ideal), adjusted], weight),
        dtype=float,
    )


@dataclass(frozen=True)
class UrineColumns:
    """The urine term of the balance per case: litres and Na + K (0 and 0 where no urine is given)."""

    given: np.ndarray
    volume_l: np.ndarray
    cations_mmol_l: np.ndarray

    @classmethod
    def of(cls, cases: Cases) -> UrineColumns:
        """A urine volume counts with its sodium; a potassium not given is taken as 0."""
        volume = cases.urine_column("urine-volume") / f.ML_PER_L
        sodium = cases.urine_column("urine-sodium")
        cations = sodium + np.nan_to_num(cases.urine_column("urine-potassium"), nan=0.0)
        given = ~np.isnan(volume) & ~np.isnan(sodium)
        return cls(given, np.where(given, volume, 0.0), np.where(given, cations, 0.0))


def dose_volume_ml(
    cases: Cases, agent: AgentColumns, tbw_l: np.ndarray, weight_kg: np.ndarray, urine: UrineColumns | None = None
) -> np.ndarray:
    """The volume each dose request comes to; NaN where it cannot be had.

    A request in mmol is of sodium, so it needs a sodium-containing agent; one
    in grams needs a single solute; a target change needs the sodium projection.
    A per-kg request is per kg of `weight_kg` (the dosing weight).
    """
    amount = np.where(cases.dose_per_kg, cases.dose_amount * weight_kg, cases.dose_amount)
    unit = dose_unit_codes(cases.dose_unit)
    by_grams = f.volume_for_amount(amount, agent.solute_g_per_l)
    by_mmol = f.volume_for_amount(amount, np.where(agent.sodium_mmol_l > 0, agent.sodium_mmol_l, np.nan))
    by_mosm = f.volume_for_amount(amount, np.where(agent.osmolarity_mosm_l > 0, agent.osmolarity_mosm_l, np.nan))
    cations = np.where(agent.projects_sodium, agent.cations_mmol_l, np.nan)
    out_l, out_c = (0.0, 0.0) if urine is None else (urine.volume_l, urine.cations_mmol_l)
    by_rise = f.volume_for_sodium_change(cases.sodium, cations, tbw_l, cases.dose_amount, out_l, out_c) * f.ML_PER_L
    volume = np.select(
        [unit == _UNIT_ML, unit == _UNIT_G, unit == _UNIT_MMOL, unit == _UNIT_MOSM, unit == _UNIT_RISE],
        [amount, by_grams, by_mmol, by_mosm, by_rise],
        default=np.nan,
    )
    return np.where(agent.has_agent, np.atleast_1d(volume).astype(float), np.nan)


def compute(cases: Cases, agents: Sequence[Agent], settings: SettingsTable, limits: Limits | None = None) -> Figures:
    """All figures for all cases; `limits` (defaults when None) set the projected range and the free-water deficit."""
    limits = default_limits() if limits is None else limits
    agent = AgentColumns.gather(agents, cases.agent_index)
    labs = cases.labs
    tbw_l, other_tbw_l = tbw_estimates(cases, settings)
    urine = UrineColumns.of(cases)
    factor = f.ETHANOL_FACTOR_EMPIRICAL if settings.ethanol_factor == "empirical" else f.ETHANOL_FACTOR_MOLAR
    ethanol = np.nan_to_num(labs["ethanol"], nan=0.0)
    calculated = np.asarray(
        f.calculated_osmolality(cases.sodium, labs["glucose"], labs["urea"], ethanol, factor), dtype=float
    )
    effective = np.asarray(f.effective_osmolality(cases.sodium, labs["glucose"]), dtype=float)
    gap = np.asarray(f.osmolar_gap(cases.osmolality, calculated), dtype=float)

    weight = dosing_weight(cases, agent, settings.adult_age_years)
    volume_ml = dose_volume_ml(cases, agent, tbw_l, weight, urine)
    solute_g = np.asarray(f.amount_in_volume(volume_ml, agent.solute_g_per_l), dtype=float)
    sodium_mmol = np.asarray(f.amount_in_volume(volume_ml, agent.sodium_mmol_l), dtype=float)
    osmoles = np.asarray(f.amount_in_volume(volume_ml, agent.osmolarity_mosm_l), dtype=float)
    duration = np.where(cases.duration_min > 0, cases.duration_min, np.nan)
    rate = np.asarray(f.infusion_rate(volume_ml, duration), dtype=float)

    cations = np.where(agent.projects_sodium, agent.cations_mmol_l, np.nan)
    per_litre = np.asarray(f.sodium_change_per_litre(cases.sodium, cations, tbw_l), dtype=float)
    litres = volume_ml / f.ML_PER_L
    # A urine volume as large as the body's water gives a zero or negative denominator: such a case is refused
    # after the engine (`balance.urine_problems`), so its figures need no warning here.
    with np.errstate(divide="ignore", invalid="ignore"):
        projected = np.asarray(
            f.projected_sodium(cases.sodium, cations, tbw_l, litres, urine.volume_l, urine.cations_mmol_l), dtype=float
        )
        without = np.asarray(f.projected_sodium(cases.sodium, cations, tbw_l, litres), dtype=float)
        tbw_low, tbw_high = tbw_range(cases, tbw_l, other_tbw_l)
        low, high = projection_range(cases.sodium, cations, litres, urine, projected, tbw_low, tbw_high, limits)
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
        corrected_sodium_katz=np.asarray(
            f.corrected_sodium(cases.sodium, labs["glucose"], f.CORRECTED_SODIUM_KATZ_PER_100_MG_DL), dtype=float
        ),
        corrected_sodium_hillier=np.asarray(
            f.corrected_sodium(cases.sodium, labs["glucose"], f.CORRECTED_SODIUM_HILLIER_PER_100_MG_DL), dtype=float
        ),
        bmi=np.asarray(f.body_mass_index(cases.weight_kg, cases.height_cm), dtype=float),
        dosing_weight_kg=weight,
        osmoles_mosm_per_kg_min=osmoles / weight / duration,
        projected_sodium_without_losses=without,
        projected_sodium_low=low,
        projected_sodium_high=high,
        tbw_low_l=tbw_low,
        tbw_high_l=tbw_high,
        tbw_other_l=other_tbw_l,
        free_water_clearance_l=np.where(
            urine.given,
            f.electrolyte_free_water_clearance(
                urine.volume_l,
                cases.urine_column("urine-sodium"),
                np.nan_to_num(cases.urine_column("urine-potassium"), nan=0.0),
                cases.sodium,
            ),
            np.nan,
        ),
        free_water_deficit_l=free_water_deficit(cases.sodium, tbw_l, limits),
    )


def tbw_range(cases: Cases, tbw_l: np.ndarray, other_tbw_l: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The total body water a projection's range spans, litres.

    Both methods where both apply (the fractions against Watson for an adult
    with a height), each widened by Watson's standard error of estimate (3.76 L
    men, 3.60 L women: Watson PE et al. Am J Clin Nutr 1980), kept within the
    share of weight a body can hold.  Watson's error is for adults; for a child
    it is applied as it is, which gives a wide range by design.
    """
    low, high = f.tbw_band(
        tbw_l, other_tbw_l, f.watson_standard_error(cases.male), cases.weight_kg, *TBW_SHARE_OF_WEIGHT
    )
    return np.asarray(low, dtype=float), np.asarray(high, dtype=float)


def projection_range(
    sodium: np.ndarray,
    cations: np.ndarray,
    litres: np.ndarray,
    urine: UrineColumns,
    projected: np.ndarray,
    tbw_low: np.ndarray,
    tbw_high: np.ndarray,
    limits: Limits,
) -> tuple[np.ndarray, np.ndarray]:
    """(low, high) projected sodium, mmol/L, always holding the point `projected`.

    The balance over total body water from `tbw_low` to `tbw_high` and the
    measured sodium +/- `projection_sodium_error` (2 mmol/L, common practice);
    then, for a rise where the 24 h rise limits apply (a low starting sodium),
    the high end is raised to at least `projection_rise_underprediction` of the
    predicted rise (240 %: those who overcorrected in Mohmand HK et al. Clin J
    Am Soc Nephrol 2007 rose 2.4 times the Adrogue-Madias prediction).
    """
    error = limits.projection_sodium_error or 0.0
    low, high = f.projected_sodium_range(
        sodium, cations, tbw_low, tbw_high, litres, error, urine.volume_l, urine.cations_mmol_l
    )
    low, high = np.asarray(low, dtype=float), np.asarray(high, dtype=float)
    share = limits.projection_rise_underprediction
    rise = projected - sodium
    if share is not None:
        with np.errstate(invalid="ignore"):
            widened = (rise > 0) & rise_limits_apply(sodium, limits)
        high = np.where(widened, np.fmax(high, sodium + share / 100.0 * rise), high)
    return np.fmin(low, projected), np.fmax(high, projected)


def rise_limits_apply(sodium: np.ndarray, limits: Limits) -> np.ndarray:
    """Whether the 24 h rise limits apply from this starting sodium (below `sodium_rise_applies_below`)."""
    below = limits.sodium_rise_applies_below
    if below is None:
        return np.ones(np.shape(sodium), dtype=bool)
    return threshold_below(sodium, below, None) > 0


def free_water_deficit(sodium: np.ndarray, tbw_l: np.ndarray, limits: Limits) -> np.ndarray:
    """TBW (Na / target - 1) where sodium is above `free_water_deficit_above` (145), else NaN."""
    above, target = limits.free_water_deficit_above, limits.free_water_target_sodium
    if above is None or target is None:
        return np.full(np.shape(sodium), np.nan)
    deficit = f.free_water_deficit(tbw_l, sodium, target)
    return np.asarray(np.where(threshold(sodium, above, None) > 0, deficit, np.nan), dtype=float)
