"""Every formula osmodose uses, once, for scalars and numpy arrays alike.

Each function takes pint quantities whose magnitudes may be floats or numpy
arrays (one audit column per argument) and returns a quantity of the same
shape.  Inputs are converted to the unit the published formula is written in
with `m_as`, so a value in the wrong dimension fails loudly instead of
producing a number.  Each function names its published source.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike

from osmodose.science.units import Q_, Quantity

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


def _arr(value: ArrayLike) -> np.ndarray:
    return np.asarray(value, dtype=float)


def _out(values: np.ndarray, unit: str) -> Quantity:
    """Wrap a result; 0-d arrays become floats so scalar callers get scalars."""
    return Q_(values.item() if values.ndim == 0 else values, unit)


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


def tbw_from_fraction(weight: Quantity, fraction: ArrayLike) -> Quantity:
    """Total body water in litres from weight and a water fraction (Adrogue HJ, Madias NE. N Engl J Med 2000)."""
    return _out(_arr(weight.m_as("kg")) * _arr(fraction) / KG_PER_LITRE, "L")


def tbw_watson(age: Quantity, height: Quantity, weight: Quantity, male: ArrayLike) -> Quantity:
    """Watson formula (Watson PE et al. Am J Clin Nutr 1980;33:27-39), litres.

    The age coefficient is 0.09516 as in the original abstract; many secondary
    sources swap two digits (0.09156).
    """
    a = _arr(age.m_as("year"))
    h = _arr(height.m_as("cm"))
    w = _arr(weight.m_as("kg"))
    men = WATSON_MAN_INTERCEPT - WATSON_MAN_AGE * a + WATSON_MAN_HEIGHT * h + WATSON_MAN_WEIGHT * w
    women = WATSON_WOMAN_INTERCEPT + WATSON_WOMAN_HEIGHT * h + WATSON_WOMAN_WEIGHT * w
    return _out(np.where(np.asarray(male, dtype=bool), men, women), "L")


def calculated_osmolality(
    sodium: Quantity,
    glucose: Quantity,
    urea: Quantity,
    ethanol: Quantity | None = None,
    ethanol_factor: float = ETHANOL_FACTOR_MOLAR,
) -> Quantity:
    """2 Na + glucose + urea (+ factor x ethanol), all in mmol/L (McMaster Textbook of Internal Medicine).

    Conventional-unit labs (glucose/18, BUN/2.8, ethanol/4.6, all mg/dL) give
    the same figure once converted with the molar masses: the divisors are
    molar mass / 10.
    """
    total = (
        SODIUM_OSMOLES_PER_MOLE * _arr(sodium.m_as("mmol/L")) + _arr(glucose.m_as("mmol/L")) + _arr(urea.m_as("mmol/L"))
    )
    if ethanol is not None:
        total = total + ethanol_factor * _arr(ethanol.m_as("mmol/L"))
    return _out(total * KG_PER_LITRE, "mOsm/kg")


def effective_osmolality(sodium: Quantity, glucose: Quantity) -> Quantity:
    """Tonicity, 2 Na + glucose: urea and ethanol cross cell membranes (standard physiology)."""
    total = SODIUM_OSMOLES_PER_MOLE * _arr(sodium.m_as("mmol/L")) + _arr(glucose.m_as("mmol/L"))
    return _out(total * KG_PER_LITRE, "mOsm/kg")


def osmolar_gap(measured: Quantity, calculated: Quantity) -> Quantity:
    """Measured minus calculated osmolality."""
    return _out(_arr(measured.m_as("mOsm/kg")) - _arr(calculated.m_as("mOsm/kg")), "mOsm/kg")


def projected_sodium(serum_sodium: Quantity, infusate_cations: Quantity, tbw: Quantity, volume: Quantity) -> Quantity:
    """Serum sodium after infusing `volume`, by mass balance.

    Na_new = Na + V (Na_inf + K_inf - Na) / (TBW + V): Chen S et al. Kidney360
    2021; at V = 1 L this is the Adrogue-Madias change per litre.  Ongoing
    losses are not modelled.
    """
    na = _arr(serum_sodium.m_as("mmol/L"))
    c = _arr(infusate_cations.m_as("mmol/L"))
    w = _arr(tbw.m_as("L"))
    v = _arr(volume.m_as("L"))
    return _out(na + v * (c - na) / (w + v), "mmol/L")


def sodium_change_per_litre(serum_sodium: Quantity, infusate_cations: Quantity, tbw: Quantity) -> Quantity:
    """Adrogue-Madias: (Na_inf + K_inf - Na) / (TBW + 1) for one litre (N Engl J Med 2000;342:1581-9)."""
    one_litre = Q_(1.0, "L")
    new = projected_sodium(serum_sodium, infusate_cations, tbw, one_litre)
    return new - serum_sodium.to("mmol/L")


def volume_for_sodium_change(
    serum_sodium: Quantity, infusate_cations: Quantity, tbw: Quantity, change: Quantity
) -> Quantity:
    """The volume whose projected sodium differs from serum by `change`.

    Solves the mass-balance projection for V: V = R TBW / (C - Na - R).  Where
    no volume reaches the change (the infusate is on the wrong side of the
    serum, or not far enough past it) the result is NaN.
    """
    na = _arr(serum_sodium.m_as("mmol/L"))
    c = _arr(infusate_cations.m_as("mmol/L"))
    w = _arr(tbw.m_as("L"))
    r = _arr(change.m_as("mmol/L"))
    gap = c - na
    reachable = (r != 0) & (np.sign(gap) == np.sign(r)) & (np.abs(gap) > np.abs(r))
    with np.errstate(divide="ignore", invalid="ignore"):
        volume = np.where(reachable, r * w / (gap - r), np.nan)
    return _out(volume, "L")


def amount_in_volume(volume: Quantity, concentration: Quantity, unit: str) -> Quantity:
    """What `volume` of a solution of `concentration` holds, in `unit`."""
    return (volume * concentration).to(unit)


def volume_for_amount(amount: Quantity, concentration: Quantity) -> Quantity:
    """The volume of a solution of `concentration` that holds `amount`, in mL."""
    return (amount / concentration).to("mL")


def infusion_rate(volume: Quantity, duration: Quantity) -> Quantity:
    """Constant rate that gives `volume` over `duration`, in mL/h."""
    return (volume / duration).to("mL/h")


def cerebral_perfusion_pressure(mean_arterial: Quantity, intracranial: Quantity) -> Quantity:
    """CPP = MAP - ICP (Carney N et al. Guidelines for the Management of Severe Traumatic Brain Injury,
    4th ed. Neurosurgery 2017;80:6-15), in mmHg."""
    return _out(_arr(mean_arterial.m_as("mmHg")) - _arr(intracranial.m_as("mmHg")), "mmHg")
