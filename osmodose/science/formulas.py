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
    serum_sodium_mmol_l: ArrayLike, infusate_cations_mmol_l: ArrayLike, tbw_l: ArrayLike, volume_l: ArrayLike
) -> Figure:
    """Serum sodium after infusing `volume_l`, by mass balance, mmol/L.

    Na_new = Na + V (Na_inf + K_inf - Na) / (TBW + V): Chen S et al. Kidney360
    2021; at V = 1 L this is the Adrogue-Madias change per litre.  Ongoing
    losses are not modelled.
    """
    na, c, w, v = _arr(serum_sodium_mmol_l), _arr(infusate_cations_mmol_l), _arr(tbw_l), _arr(volume_l)
    return _out(na + v * (c - na) / (w + v))


def sodium_change_per_litre(
    serum_sodium_mmol_l: ArrayLike, infusate_cations_mmol_l: ArrayLike, tbw_l: ArrayLike
) -> Figure:
    """Adrogue-Madias: (Na_inf + K_inf - Na) / (TBW + 1) for one litre (N Engl J Med 2000;342:1581-9)."""
    new = projected_sodium(serum_sodium_mmol_l, infusate_cations_mmol_l, tbw_l, 1.0)
    return _out(_arr(new) - _arr(serum_sodium_mmol_l))


def volume_for_sodium_change(
    serum_sodium_mmol_l: ArrayLike, infusate_cations_mmol_l: ArrayLike, tbw_l: ArrayLike, change_mmol_l: ArrayLike
) -> Figure:
    """The volume in litres whose projected sodium differs from serum by `change_mmol_l`.

    Solves the mass-balance projection for V: V = R TBW / (C - Na - R).  Where
    no volume reaches the change (the infusate is on the wrong side of the
    serum, or not far enough past it) the result is NaN.
    """
    na, c, w, r = _arr(serum_sodium_mmol_l), _arr(infusate_cations_mmol_l), _arr(tbw_l), _arr(change_mmol_l)
    gap = c - na
    reachable = (r != 0) & (np.sign(gap) == np.sign(r)) & (np.abs(gap) > np.abs(r))
    with np.errstate(divide="ignore", invalid="ignore"):
        volume = np.where(reachable, r * w / (gap - r), np.nan)
    return _out(volume)


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
