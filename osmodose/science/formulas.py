"""Every formula osmodose uses, once, for scalars and numpy arrays alike.

Every argument and result is a plain float or numpy array in the canonical
unit its name carries (`sodium_mmol_l`, `tbw_l`, `volume_l`): units are read and
checked at the edges (`units.parse_quantity` for what people type, the
formulary loader for files), so the engine runs on numbers alone, one audit
column per argument or a single case alike.  A 0-d result comes back as a
Python float.  Each function names its published source.
"""

from __future__ import annotations

from typing import Any

import numpy as np
from numpy.typing import ArrayLike

#: Serum sodium counts twice: each Na+ brings an anion (Cl-, HCO3-) with it.
SODIUM_OSMOLES_PER_MOLE = 2.0

#: Calculated osmolarity (per litre of serum) is reported as osmolality (per kg
#: of water) by the usual convention that one litre weighs one kilogram; the
#: same convention turns a body-weight fraction into litres of water.
KG_PER_LITRE = 1.0

#: Ethanol's osmotic factor: 1.0 is the molar contribution (Nguyen MK et al.
#: Front Med 2020); 1.25 the empirical one (Purssell RA et al. Ann Emerg Med 2001).
ETHANOL_FACTOR_MOLAR = 1.0
ETHANOL_FACTOR_EMPIRICAL = 1.25

#: Total body water as a fraction of weight for the Adrogue-Madias formula
#: (Adrogue HJ, Madias NE. N Engl J Med 2000;342:1581-9, as restated in reviews).
TBW_FRACTION_CHILD = 0.6
#: Infants hold more water than older children: about 75-80 % of weight at birth, falling to
#: about 60 % by one year (Friis-Hansen B. Pediatrics 1961;28:169-81, from memory); 0.7 is
#: the middle of the first year.  A formulary setting (`tbw_fraction_infant`) may change it.
TBW_FRACTION_INFANT = 0.7
INFANT_AGE_YEARS = 1.0
TBW_FRACTION_MAN = 0.6
TBW_FRACTION_ELDERLY_MAN = 0.5
TBW_FRACTION_WOMAN = 0.5
TBW_FRACTION_ELDERLY_WOMAN = 0.45

#: Watson formula coefficients (Watson PE et al. Am J Clin Nutr 1980;33:27-39), litres from
#: years, cm and kg; the age coefficient is subtracted, and women's formula has no age term.
WATSON_MAN_INTERCEPT = 2.447
WATSON_MAN_AGE = 0.09516
WATSON_MAN_HEIGHT = 0.1074
WATSON_MAN_WEIGHT = 0.3362
WATSON_WOMAN_INTERCEPT = -2.097
WATSON_WOMAN_HEIGHT = 0.1069
WATSON_WOMAN_WEIGHT = 0.2466
#: Watson's published standard errors of estimate, litres (Watson PE et al. Am J Clin Nutr 1980;33:27-39,
#: abstract): men 3.76 L, women 3.60 L.
WATSON_SEE_MAN_L = 3.76
WATSON_SEE_WOMAN_L = 3.60


#: Two figures this close, relative to their size, are the same figure: floating-point arithmetic
#: leaves a few units in the last place (a 1.5 g/kg order came back as 1.5000000000000004 g/kg for
#: 40.2 kg), which must not cross a limit set at 1.5 g/kg nor count as a changed concentration.
RELATIVE_NOISE = 1e-9

#: A float for a scalar case, an array for a column of cases.
Figure = Any

MINUTES_PER_HOUR = 60.0
ML_PER_L = 1000.0


def _arr(value: ArrayLike) -> np.ndarray:
    return np.asarray(value, dtype=float)


def _out(values: np.ndarray) -> Figure:
    """0-d arrays become floats so scalar callers get scalars."""
    return values.item() if values.ndim == 0 else values


def tbw_fraction(
    age_years: ArrayLike,
    male: ArrayLike,
    elderly_age: float = 65.0,
    adult_age: float = 18.0,
    infant_age: float = INFANT_AGE_YEARS,
    infant_fraction: float | None = None,
    child_fraction: float | None = None,
) -> np.ndarray:
    """Adrogue-Madias fraction of body weight that is water.

    "Elderly" starts at `elderly_age` (sources say 65 or 70: a unit setting);
    below `adult_age` the child fraction applies to both sexes, and below
    `infant_age` the infant fraction (both formulary settings; the module's
    constants when not given).
    """
    age = _arr(age_years)
    is_male = np.asarray(male, dtype=bool)
    elderly = age >= elderly_age
    adult = np.where(
        is_male,
        np.where(elderly, TBW_FRACTION_ELDERLY_MAN, TBW_FRACTION_MAN),
        np.where(elderly, TBW_FRACTION_ELDERLY_WOMAN, TBW_FRACTION_WOMAN),
    )
    child = TBW_FRACTION_CHILD if child_fraction is None else child_fraction
    infant = TBW_FRACTION_INFANT if infant_fraction is None else infant_fraction
    return np.where(age < infant_age, infant, np.where(age < adult_age, child, adult))


def tbw_from_fraction(weight_kg: ArrayLike, fraction: ArrayLike) -> Figure:
    """Total body water in litres from weight and a water fraction (Adrogue HJ, Madias NE. N Engl J Med 2000)."""
    return _out(_arr(weight_kg) * _arr(fraction) / KG_PER_LITRE)


def tbw_watson(age_years: ArrayLike, height_cm: ArrayLike, weight_kg: ArrayLike, male: ArrayLike) -> Figure:
    """Watson formula (Watson PE et al. Am J Clin Nutr 1980;33:27-39), litres.

    The age coefficient is 0.09516 as in the original abstract; many secondary
    sources swap two digits (0.09156).
    """
    a, h, w = _arr(age_years), _arr(height_cm), _arr(weight_kg)
    men = WATSON_MAN_INTERCEPT - WATSON_MAN_AGE * a + WATSON_MAN_HEIGHT * h + WATSON_MAN_WEIGHT * w
    women = WATSON_WOMAN_INTERCEPT + WATSON_WOMAN_HEIGHT * h + WATSON_WOMAN_WEIGHT * w
    return _out(np.where(np.asarray(male, dtype=bool), men, women))


def calculated_osmolality(
    sodium_mmol_l: ArrayLike,
    glucose_mmol_l: ArrayLike,
    urea_mmol_l: ArrayLike,
    ethanol_mmol_l: ArrayLike = 0.0,
    ethanol_factor: float = ETHANOL_FACTOR_MOLAR,
) -> Figure:
    """2 Na + glucose + urea (+ factor x ethanol), all in mmol/L, in mOsm/kg (McMaster Textbook of Internal Medicine).

    Conventional-unit labs (glucose/18, BUN/2.8, ethanol/4.6, all mg/dL) give
    the same figure once converted with the molar masses: the divisors are
    molar mass / 10.
    """
    total = SODIUM_OSMOLES_PER_MOLE * _arr(sodium_mmol_l) + _arr(glucose_mmol_l) + _arr(urea_mmol_l)
    total = total + ethanol_factor * _arr(ethanol_mmol_l)
    return _out(total * KG_PER_LITRE)


def effective_osmolality(sodium_mmol_l: ArrayLike, glucose_mmol_l: ArrayLike) -> Figure:
    """Tonicity, 2 Na + glucose, mOsm/kg: urea and ethanol cross cell membranes (standard physiology)."""
    return _out((SODIUM_OSMOLES_PER_MOLE * _arr(sodium_mmol_l) + _arr(glucose_mmol_l)) * KG_PER_LITRE)


def osmolar_gap(measured_mosm_kg: ArrayLike, calculated_mosm_kg: ArrayLike) -> Figure:
    """Measured minus calculated osmolality, mOsm/kg."""
    return _out(_arr(measured_mosm_kg) - _arr(calculated_mosm_kg))


def projected_sodium(
    serum_sodium_mmol_l: ArrayLike,
    infusate_cations_mmol_l: ArrayLike,
    tbw_l: ArrayLike,
    volume_l: ArrayLike,
    urine_volume_l: ArrayLike = 0.0,
    urine_cations_mmol_l: ArrayLike = 0.0,
) -> Figure:
    """Serum sodium after infusing `volume_l` while `urine_volume_l` is passed, by mass balance, mmol/L.

    The full balance of Barsoum NR, Levine BS (Nephrol Dial Transplant
    2002;17:1176): Na_new = (Na TBW + V_in (Na+K)_in - V_out (Na+K)_out) /
    (TBW + V_in - V_out), written here as Na + [V_in (C_in - Na) - V_out
    (C_out - Na)] / (TBW + V_in - V_out).  Without urine (the defaults) this is
    Na + V (Na_inf + K_inf - Na) / (TBW + V) (Chen S et al. Kidney360 2021),
    to the last bit, and at V = 1 L the Adrogue-Madias change per litre.
    Losses other than the urine given (and any other intake) are not modelled.
    """
    na, c, w, v = _arr(serum_sodium_mmol_l), _arr(infusate_cations_mmol_l), _arr(tbw_l), _arr(volume_l)
    out, co = _arr(urine_volume_l), _arr(urine_cations_mmol_l)
    return _out(na + (v * (c - na) - out * (co - na)) / (w + v - out))


def sodium_change_per_litre(
    serum_sodium_mmol_l: ArrayLike, infusate_cations_mmol_l: ArrayLike, tbw_l: ArrayLike
) -> Figure:
    """Adrogue-Madias: (Na_inf + K_inf - Na) / (TBW + 1) for one litre (N Engl J Med 2000;342:1581-9)."""
    new = projected_sodium(serum_sodium_mmol_l, infusate_cations_mmol_l, tbw_l, 1.0)
    return _out(_arr(new) - _arr(serum_sodium_mmol_l))


def volume_for_sodium_change(
    serum_sodium_mmol_l: ArrayLike,
    infusate_cations_mmol_l: ArrayLike,
    tbw_l: ArrayLike,
    change_mmol_l: ArrayLike,
    urine_volume_l: ArrayLike = 0.0,
    urine_cations_mmol_l: ArrayLike = 0.0,
) -> Figure:
    """The volume in litres whose projected sodium differs from serum by `change_mmol_l`.

    Solves the full balance (`projected_sodium`, Barsoum & Levine 2002) for
    V_in: V = [R (TBW - V_out) + V_out (C_out - Na)] / (C_in - Na - R); without
    urine V = R TBW / (C - Na - R).  Where no positive volume reaches the change
    (the infusate is on the wrong side of the serum, or not far enough past it,
    or the urine alone moves sodium past the change) the result is NaN.
    """
    na, c, w, r = _arr(serum_sodium_mmol_l), _arr(infusate_cations_mmol_l), _arr(tbw_l), _arr(change_mmol_l)
    out, co = _arr(urine_volume_l), _arr(urine_cations_mmol_l)
    with np.errstate(divide="ignore", invalid="ignore"):
        volume = (r * (w - out) + out * (co - na)) / (c - na - r)
        reachable = (r != 0) & np.isfinite(volume) & (volume > 0) & (w + volume - out > 0)
    return _out(np.where(reachable, volume, np.nan))


def amount_in_volume(volume_ml: ArrayLike, concentration_per_l: ArrayLike) -> Figure:
    """What `volume_ml` of a solution holds, in the unit of its concentration per litre (g, mmol, mOsm)."""
    return _out(_arr(volume_ml) * _arr(concentration_per_l) / ML_PER_L)


def volume_for_amount(amount: ArrayLike, concentration_per_l: ArrayLike) -> Figure:
    """The volume in mL of a solution that holds `amount` (g, mmol or mOsm, as its concentration per litre)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        return _out(_arr(amount) * ML_PER_L / _arr(concentration_per_l))


def infusion_rate(volume_ml: ArrayLike, duration_min: ArrayLike) -> Figure:
    """Constant rate in mL/h that gives `volume_ml` over `duration_min`."""
    with np.errstate(divide="ignore", invalid="ignore"):
        return _out(_arr(volume_ml) * MINUTES_PER_HOUR / _arr(duration_min))


def cerebral_perfusion_pressure(mean_arterial_mmhg: ArrayLike, intracranial_mmhg: ArrayLike) -> Figure:
    """CPP = MAP - ICP (Carney N et al. Guidelines for the Management of Severe Traumatic Brain Injury,
    4th ed. Neurosurgery 2017;80:6-15), in mmHg."""
    return _out(_arr(mean_arterial_mmhg) - _arr(intracranial_mmhg))


#: Glucose-corrected sodium: mmol/L added per 100 mg/dL of glucose above 100 mg/dL (Katz MA.
#: N Engl J Med 1973;289:843: 1.6; Hillier TA et al. Am J Med 1999;106:399: 2.4).
CORRECTED_SODIUM_KATZ_PER_100_MG_DL = 1.6
CORRECTED_SODIUM_HILLIER_PER_100_MG_DL = 2.4
#: The glucose at or below which no correction is made (both papers correct from 100 mg/dL).
CORRECTED_SODIUM_GLUCOSE_FROM_MG_DL = 100.0
#: mg/dL per mmol/L of glucose: its molar mass (180.16 g/mol, IUPAC/CIAAW) / 10.
GLUCOSE_MG_DL_PER_MMOL_L = 18.016


def corrected_sodium(sodium_mmol_l: ArrayLike, glucose_mmol_l: ArrayLike, per_100_mg_dl: float) -> Figure:
    """Serum sodium corrected for high glucose, mmol/L: Na + factor x (glucose - 100 mg/dL) / 100.

    The factor is 1.6 (Katz 1973) or 2.4 (Hillier 1999) mmol/L per 100 mg/dL;
    no correction at or below 100 mg/dL; NaN without a glucose.
    """
    glucose_mg_dl = _arr(glucose_mmol_l) * GLUCOSE_MG_DL_PER_MMOL_L
    excess = np.maximum(glucose_mg_dl - CORRECTED_SODIUM_GLUCOSE_FROM_MG_DL, 0.0)
    return _out(_arr(sodium_mmol_l) + per_100_mg_dl * excess / 100.0)


def body_mass_index(weight_kg: ArrayLike, height_cm: ArrayLike) -> Figure:
    """Weight / height squared, kg/m^2 (the WHO's body mass index); NaN without a height."""
    metres = _arr(height_cm) / 100.0
    with np.errstate(divide="ignore", invalid="ignore"):
        return _out(_arr(weight_kg) / (metres * metres))


#: Devine BJ. Drug Intell Clin Pharm 1974;8:650-5 (as restated in pharmacy references, from
#: memory): ideal body weight 50 kg (men) or 45.5 kg (women) + 2.3 kg per inch above 5 feet.
IDEAL_WEIGHT_MAN_KG = 50.0
IDEAL_WEIGHT_WOMAN_KG = 45.5
IDEAL_WEIGHT_KG_PER_INCH = 2.3
CM_PER_INCH = 2.54
FIVE_FEET_IN_INCHES = 60.0
#: Adjusted body weight = ideal + 0.4 x (actual - ideal) (common practice, as in drug dosing in obesity).
ADJUSTED_WEIGHT_FACTOR = 0.4


def ideal_body_weight(height_cm: ArrayLike, male: ArrayLike) -> Figure:
    """Devine ideal body weight, kg, from height and sex (an adult formula)."""
    inches_over = _arr(height_cm) / CM_PER_INCH - FIVE_FEET_IN_INCHES
    base = np.where(np.asarray(male, dtype=bool), IDEAL_WEIGHT_MAN_KG, IDEAL_WEIGHT_WOMAN_KG)
    return _out(base + IDEAL_WEIGHT_KG_PER_INCH * inches_over)


def adjusted_body_weight(weight_kg: ArrayLike, ideal_kg: ArrayLike) -> Figure:
    """Ideal + 0.4 x (actual - ideal), kg (common practice)."""
    ideal = _arr(ideal_kg)
    return _out(ideal + ADJUSTED_WEIGHT_FACTOR * (_arr(weight_kg) - ideal))


def watson_standard_error(male: ArrayLike) -> Figure:
    """Watson's standard error of estimate of total body water, litres: 3.76 men, 3.60 women (Watson 1980)."""
    return _out(np.where(np.asarray(male, dtype=bool), WATSON_SEE_MAN_L, WATSON_SEE_WOMAN_L))


def tbw_band(
    estimate_l: ArrayLike,
    other_estimate_l: ArrayLike,
    standard_error_l: ArrayLike,
    weight_kg: ArrayLike,
    share_low: float,
    share_high: float,
) -> tuple[Figure, Figure]:
    """(low, high) total body water, litres: the two estimates, each widened by a standard error.

    [min(estimate, other) - SE, max(estimate, other) + SE], where `other` is a
    second method's estimate (Watson against the fraction of weight; NaN where
    there is none), kept within `share_low`-`share_high` of body weight and
    always holding `estimate` itself.
    """
    est, other, se, weight = _arr(estimate_l), _arr(other_estimate_l), _arr(standard_error_l), _arr(weight_kg)
    low = np.maximum(np.fmin(est, other) - se, share_low * weight / KG_PER_LITRE)
    high = np.minimum(np.fmax(est, other) + se, share_high * weight / KG_PER_LITRE)
    return _out(np.fmin(low, est)), _out(np.fmax(high, est))


def projected_sodium_range(
    serum_sodium_mmol_l: ArrayLike,
    infusate_cations_mmol_l: ArrayLike,
    tbw_low_l: ArrayLike,
    tbw_high_l: ArrayLike,
    volume_l: ArrayLike,
    sodium_error_mmol_l: ArrayLike,
    urine_volume_l: ArrayLike = 0.0,
    urine_cations_mmol_l: ArrayLike = 0.0,
) -> tuple[Figure, Figure]:
    """(low, high) of the balance (`projected_sodium`) over serum sodium +/- the error and TBW low to high.

    The balance rises with the starting sodium and moves monotonically with
    total body water, so its extremes over the box are at the four corners.
    """
    na, err = _arr(serum_sodium_mmol_l), _arr(sodium_error_mmol_l)
    corners = [
        _arr(projected_sodium(na + sign * err, infusate_cations_mmol_l, w, volume_l, urine_volume_l,
                              urine_cations_mmol_l))
        for sign in (-1.0, 1.0)
        for w in (tbw_low_l, tbw_high_l)
    ]  # fmt: skip
    return _out(np.minimum.reduce(corners)), _out(np.maximum.reduce(corners))


def electrolyte_free_water_clearance(
    urine_volume_l: ArrayLike,
    urine_sodium_mmol_l: ArrayLike,
    urine_potassium_mmol_l: ArrayLike,
    serum_sodium_mmol_l: ArrayLike,
) -> Figure:
    """Electrolyte-free water clearance V (1 - (U_Na + U_K) / P_Na), litres over the urine's period (secondary sources).

    Positive: the urine takes out water free of sodium and potassium, so serum
    sodium rises; negative: it takes out more than serum carries.
    """
    v, una, uk, pna = (
        _arr(urine_volume_l),
        _arr(urine_sodium_mmol_l),
        _arr(urine_potassium_mmol_l),
        _arr(serum_sodium_mmol_l),
    )
    return _out(v * (1.0 - (una + uk) / pna))


def free_water_deficit(tbw_l: ArrayLike, serum_sodium_mmol_l: ArrayLike, target_sodium_mmol_l: ArrayLike) -> Figure:
    """TBW (Na / target - 1), litres: the water that would bring sodium down to the target (secondary sources).

    With the usual target of 140: a 68 kg man of 76 (TBW 34 L) at 168 lacks 6.8 L.
    Ongoing losses during the correction come on top.
    """
    return _out(_arr(tbw_l) * (_arr(serum_sodium_mmol_l) / _arr(target_sodium_mmol_l) - 1.0))


def apparent_tbw(
    sodium_before_mmol_l: ArrayLike,
    sodium_after_mmol_l: ArrayLike,
    cations_in_mmol: ArrayLike,
    volume_in_l: ArrayLike,
    cations_out_mmol: ArrayLike = 0.0,
    volume_out_l: ArrayLike = 0.0,
) -> Figure:
    """The total body water an observed sodium change implies, litres: the balance solved for TBW.

    From Na_after (TBW + V_in - V_out) = Na_before TBW + (Na+K)_in - (Na+K)_out
    (Barsoum & Levine 2002): TBW = [(Na+K)_in - (Na+K)_out - Na_after (V_in -
    V_out)] / (Na_after - Na_before), amounts in mmol.  One dose alone is
    V (C - Na_after) / (Na_after - Na_before).  NaN where sodium did not move.
    """
    before, after = _arr(sodium_before_mmol_l), _arr(sodium_after_mmol_l)
    cin, vin, cout, vout = _arr(cations_in_mmol), _arr(volume_in_l), _arr(cations_out_mmol), _arr(volume_out_l)
    change = after - before
    with np.errstate(divide="ignore", invalid="ignore"):
        tbw = (cin - cout - after * (vin - vout)) / np.where(change != 0, change, np.nan)
    return _out(tbw)
