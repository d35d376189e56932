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
    age_years: ArrayLike, male: ArrayLike, elderly_age: float = 65.0, adult_age: float = 18.0
) -> np.ndarray:
    """Adrogue-Madias fraction of body weight that is water.

    "Elderly" starts at `elderly_age` (sources say 65 or 70: a unit setting);
    below `adult_age` the child fraction applies to both sexes.
    """
    age = _arr(age_years)
    is_male = np.asarray(male, dtype=bool)
    elderly = age >= elderly_age
    adult = np.where(
        is_male,
        np.where(elderly, TBW_FRACTION_ELDERLY_MAN, TBW_FRACTION_MAN),
        np.where(elderly, TBW_FRACTION_ELDERLY_WOMAN, TBW_FRACTION_WOMAN),
    )
    return np.where(age < adult_age, TBW_FRACTION_CHILD, adult)


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
