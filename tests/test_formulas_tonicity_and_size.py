"""Corrected sodium, body mass index, ideal and adjusted weight, and the infant water fraction, against sources."""

from __future__ import annotations

import numpy as np
import pytest

from osmodose.science import formulas as f
from osmodose.science.chemistry import MOLAR_MASS_G_PER_MOL


def test_glucose_mg_dl_per_mmol_l_is_its_molar_mass_over_ten() -> None:
    # 180.16 g/mol (IUPAC/CIAAW) / 10: mg/dL = mmol/L x 18.016.
    assert MOLAR_MASS_G_PER_MOL["glucose"] / 10 == pytest.approx(f.GLUCOSE_MG_DL_PER_MMOL_L)


@pytest.mark.parametrize(
    ("sodium", "glucose_mg_dl", "factor", "expected"),
    [
        # Katz MA. N Engl J Med 1973;289:843: +1.6 mmol/L per 100 mg/dL above 100 (abstract).
        (130.0, 600.0, 1.6, 138.0),
        # Hillier TA et al. Am J Med 1999;106:399: +2.4 per 100 mg/dL (abstract). Check value of the domain sheet.
        (130.0, 600.0, 2.4, 142.0),
        (130.0, 100.0, 2.4, 130.0),  # at 100 mg/dL: no correction
        (130.0, 50.0, 1.6, 130.0),  # below: never lowered
        (125.0, 1000.0, 2.4, 146.6),  # 125 + 2.4 x 9
    ],
)
def test_corrected_sodium(sodium: float, glucose_mg_dl: float, factor: float, expected: float) -> None:
    glucose_mmol_l = glucose_mg_dl / f.GLUCOSE_MG_DL_PER_MMOL_L
    assert f.corrected_sodium(sodium, glucose_mmol_l, factor) == pytest.approx(expected)


def test_corrected_sodium_without_glucose_is_not_a_number() -> None:
    assert np.isnan(f.corrected_sodium(130.0, np.nan, 1.6))


@pytest.mark.parametrize(
    ("weight", "height", "bmi"),
    [
        (70.0, 175.0, 22.857),  # 70 / 1.75^2 (WHO body mass index: kg/m^2)
        (150.0, 160.0, 58.594),  # 150 / 2.56
        (76.8, 160.0, 30.0),  # the obesity threshold at 160 cm
    ],
)
def test_body_mass_index(weight: float, height: float, bmi: float) -> None:
    assert f.body_mass_index(weight, height) == pytest.approx(bmi, abs=1e-3)


@pytest.mark.parametrize(
    ("height", "male", "ideal"),
    [
        # Devine BJ 1974 (as restated in pharmacy references, from memory): 50 kg (men) / 45.5 kg (women)
        # + 2.3 kg per inch over 5 feet. 5 ft = 152.4 cm exactly.
        (152.4, True, 50.0),
        (152.4, False, 45.5),
        (182.88, True, 50.0 + 2.3 * 12),  # 6 ft: 77.6 kg
        (167.64, False, 45.5 + 2.3 * 6),  # 5 ft 6 in: 59.3 kg
    ],
)
def test_devine_ideal_body_weight(height: float, male: bool, ideal: float) -> None:
    assert f.ideal_body_weight(height, male) == pytest.approx(ideal)


def test_adjusted_body_weight_adds_four_tenths_of_the_excess() -> None:
    # Common practice: ideal + 0.4 x (actual - ideal): 77.6 + 0.4 x (120 - 77.6) = 94.56 kg.
    assert f.adjusted_body_weight(120.0, 77.6) == pytest.approx(94.56)


@pytest.mark.parametrize(
    ("age", "fraction"),
    [
        (0.0, 0.7),  # newborn: the infant fraction (Friis-Hansen 1961: about 0.75-0.8 at birth, from memory)
        (0.99, 0.7),
        (1.0, 0.6),  # from one year the child fraction (Adrogue-Madias 2000)
        (17.9, 0.6),
    ],
)
def test_the_infant_fraction_applies_below_one_year(age: float, fraction: float) -> None:
    assert f.tbw_fraction(age, True) == pytest.approx(fraction)
    assert f.tbw_fraction(age, True, infant_fraction=0.75, child_fraction=0.62) == pytest.approx(
        0.75 if age < 1 else 0.62
    )
