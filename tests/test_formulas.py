"""The published formulas against their worked examples and check values."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from osmodose.case.inputs import parse_check_request
from osmodose.check.run import run_check
from osmodose.formulary import Formulary, load_formulary
from osmodose.science import formulas as f
from osmodose.science.chemistry import molar_mass
from osmodose.science.units import Q_

# --- Adrogue-Madias and the mass-balance projection --------------------------------------------


def test_adrogue_madias_three_percent_saline_in_hyponatraemia() -> None:
    # 70 kg man, TBW 0.6 x 70 = 42 L, Na 110, 1 L of 3 % saline (513 mmol/L, product label):
    # (513 - 110) / (42 + 1) = 403 / 43 = +9.37 mmol/L (Adrogue HJ, Madias NE. N Engl J Med 2000;342:1581-9).
    change = f.sodium_change_per_litre(110, 513, 42)
    assert change == pytest.approx(403 / 43)
    assert round(change, 2) == 9.37


def test_adrogue_madias_five_percent_dextrose_in_hypernatraemia() -> None:
    # From memory: the hypernatraemia paper's example (Adrogue HJ, Madias NE. N Engl J Med
    # 2000;342:1493-9): 76-year-old man, 68 kg, Na 168, TBW 0.5 x 68 = 34 L, 1 L of 5 % dextrose
    # (no sodium): (0 - 168) / (34 + 1) = -4.8 mmol/L.
    tbw = f.tbw_from_fraction(68, f.tbw_fraction(76, male=True))
    assert tbw == pytest.approx(34.0)
    change = f.sodium_change_per_litre(168, 0, tbw)
    assert change == pytest.approx(-4.8)


def test_potassium_in_the_infusate_counts_with_sodium() -> None:
    # Lactated Ringer's labelled Na 130, K 4: (130 + 4 - 120) / (42 + 1) = 14 / 43 = +0.326 mmol/L.
    change = f.sodium_change_per_litre(120, 134, 42)
    assert change == pytest.approx(14 / 43)


@pytest.mark.parametrize(
    ("serum", "infusate", "tbw"),
    [
        (110, 513, 42),  # 70 kg man, 3 % saline (Adrogue & Madias, N Engl J Med 2000;342:1581-9, worked example)
        (168, 0, 34),  # 68 kg man of 76, 5 % dextrose (N Engl J Med 2000;342:1493-9, from memory)
        (125, 154, 30),  # 0.9 % saline (product label Na 154) in a 60 kg woman: arithmetic
        (140, 4004, 42),  # 23.4 % saline (label 4 mEq/mL) in a 70 kg man: arithmetic
        (120, 134, 21.5),  # lactated Ringer's (label Na 130 + K 4) in a 43 kg woman: arithmetic
    ],
)
def test_mass_balance_at_one_litre_equals_the_per_litre_formula(serum: float, infusate: float, tbw: float) -> None:
    # Na_new = Na + V (C - Na) / (TBW + V) (Chen S et al. Kidney360 2021;2:365-370) at V = 1 L is
    # (C - Na) / (TBW + 1), the Adrogue-Madias change per litre.
    na, c, w = serum, infusate, tbw
    projected = f.projected_sodium(na, c, w, 1000 / 1000)  # 1000 mL in litres
    # Against the published per-litre formula written out here, not against our own per-litre function
    # (which is the projection at 1 L, so comparing the two would prove nothing).
    assert projected - serum == pytest.approx((infusate - serum) / (tbw + 1), rel=1e-12)
    assert f.sodium_change_per_litre(na, c, w) == pytest.approx((infusate - serum) / (tbw + 1))


def test_two_litres_is_mass_balance_not_twice_one_litre() -> None:
    # For V litres, mass balance rather than linear scaling of the 1 L figure (Chen S et al. Kidney360
    # 2021;2:365-370; Wagner B et al. Kidney360 2023). 2 L of 3 % at Na 110, TBW 42:
    # mass balance 2 x 403 / 44 = +18.32; linear scaling would say 2 x 403 / 43 = +18.74.
    projected = f.projected_sodium(110, 513, 42, 2)
    assert projected - 110 == pytest.approx(2 * 403 / 44)
    assert projected - 110 < 2 * 403 / 43


def test_volume_for_a_sodium_change_solves_the_projection() -> None:
    # +5 mmol/L with 3 % (513) at Na 110, TBW 42: V = R TBW / (C - Na - R) = 5 x 42 / (403 - 5) = 0.5276 L.
    volume = f.volume_for_sodium_change(110, 513, 42, 5)
    assert volume == pytest.approx(210 / 398)
    back = f.projected_sodium(110, 513, 42, volume)
    assert back == pytest.approx(115.0)


@pytest.mark.parametrize(
    ("serum", "infusate", "change"),
    [
        (140, 154, 20),  # 0.9 % saline cannot raise Na 140 by 20: it is only 14 above
        (140, 154, 14),  # the limit itself needs an infinite volume
        (140, 0, 5),  # a sodium-free fluid cannot raise sodium
        (168, 513, -5),  # hypertonic saline cannot lower sodium
        (140, 154, 0),
    ],
)
def test_an_unreachable_change_has_no_volume(serum: float, infusate: float, change: float) -> None:
    volume = f.volume_for_sodium_change(serum, infusate, 42, change)
    assert np.isnan(volume)


# --- total body water --------------------------------------------------------------------------


def test_watson_man() -> None:
    # Watson PE, Watson ID, Batt RD. Am J Clin Nutr 1980;33:27-39 (original abstract), man 35 y, 180 cm, 80 kg:
    # 2.447 - 0.09516 x 35 + 0.1074 x 180 + 0.3362 x 80 = 2.447 - 3.3306 + 19.332 + 26.896 = 45.3444 L.
    tbw = f.tbw_watson(35, 180, 80, male=True)
    assert tbw == pytest.approx(45.3444, abs=1e-9)
    assert round(tbw, 2) == 45.34


def test_watson_uses_the_original_age_coefficient() -> None:
    # The original is 0.09516; the digit-swapped 0.09156 printed in many secondary sources would give
    # 2.447 - 0.09156 x 35 + 19.332 + 26.896 = 45.4704 L for the same man.
    tbw = f.tbw_watson(35, 180, 80, male=True)
    assert tbw != pytest.approx(45.4704, abs=0.01)
    # The age slope is the coefficient itself: one year less adds 0.09516 L.
    younger = f.tbw_watson(34, 180, 80, male=True)
    assert younger - tbw == pytest.approx(0.09516, abs=1e-9)


def test_watson_woman() -> None:
    # Watson 1980, woman 165 cm, 65 kg (no age term): -2.097 + 0.1069 x 165 + 0.2466 x 65
    # = -2.097 + 17.6385 + 16.029 = 31.5705 L.
    tbw = f.tbw_watson(50, 165, 65, male=False)
    assert tbw == pytest.approx(31.5705, abs=1e-9)
    assert round(tbw, 2) == 31.57
    assert f.tbw_watson(80, 165, 65, male=False) == pytest.approx(31.5705)


@pytest.mark.parametrize(
    ("age", "male", "elderly_age", "fraction"),
    [
        # Adrogue HJ, Madias NE. N Engl J Med 2000;342:1581-9 (as restated in reviews): children 0.6;
        # men 0.6, elderly men 0.5; women 0.5, elderly women 0.45. "Elderly" is 65 or 70 by source:
        # a formulary setting, default 65 (common practice), applying from that age on.
        (8, True, 65, 0.6),
        (8, False, 65, 0.6),
        (17.9, False, 65, 0.6),
        (18, False, 65, 0.5),
        (18, True, 65, 0.6),
        (40, True, 65, 0.6),
        (40, False, 65, 0.5),
        (64.9, True, 65, 0.6),
        (65, True, 65, 0.5),
        (76, True, 65, 0.5),
        (64.9, False, 65, 0.5),
        (65, False, 65, 0.45),
        (67, True, 70, 0.6),
        (67, False, 70, 0.5),
        (70, True, 70, 0.5),
        (70, False, 70, 0.45),
    ],
)
def test_tbw_fraction_by_age_and_sex(age: float, male: bool, elderly_age: float, fraction: float) -> None:
    assert f.tbw_fraction(age, male, elderly_age=elderly_age) == fraction


def test_the_elderly_cut_off_setting_reaches_the_check(tmp_path: Path, demo: Formulary) -> None:
    # A 67-year-old man of 70 kg: 0.5 x 70 = 35 L with the cut-off at 65, 0.6 x 70 = 42 L at 70.
    path = tmp_path / "seventy.toml"
    text = Path(demo.path).read_text(encoding="utf-8")
    path.write_text(text.replace("elderly_age_years = 65", "elderly_age_years = 70"), encoding="utf-8")
    request = parse_check_request({"weight": "70", "age": "67", "sex": "male", "sodium": "140"})
    assert run_check(request, demo).patient.total_body_water_l == pytest.approx(35.0)
    assert run_check(request, load_formulary(path)).patient.total_body_water_l == pytest.approx(42.0)


def test_watson_reaches_the_check(demo: Formulary) -> None:
    fields = {"weight": "80", "age": "35", "sex": "male", "height": "180", "sodium": "140", "tbw-method": "watson"}
    patient = run_check(parse_check_request(fields), demo).patient
    assert (patient.tbw_method, round(patient.total_body_water_l, 2)) == ("watson", 45.34)


# --- osmolality --------------------------------------------------------------------------------


def test_calculated_osmolality_in_si_units() -> None:
    # 2 Na + glucose + urea, all mmol/L (McMaster Textbook of Internal Medicine, "Alcohols"):
    # 2 x 140 + 5 + 5 = 290 mOsm/kg.
    osm = f.calculated_osmolality(140, 5, 5)
    assert osm == pytest.approx(290.0)


@pytest.mark.parametrize(
    ("sodium", "glucose_mg_dl", "bun_mg_dl"),
    [(140, 90, 14), (140, 126, 28), (130, 540, 56), (155, 72, 7)],
)
def test_conventional_units_give_the_same_osmolality(sodium: float, glucose_mg_dl: float, bun_mg_dl: float) -> None:
    # 2 Na + glucose/18 + BUN/2.8 with glucose and BUN in mg/dL (Cleveland Clinic Journal of Medicine):
    # the divisors are molar mass / 10 (glucose 180.16, BUN as N2 28.01 g/mol), so converting the labs
    # with the molar masses gives the same figure within the divisors' rounding (< 0.1 mOsm/kg here).
    conventional = 2 * sodium + glucose_mg_dl / 18 + bun_mg_dl / 2.8
    glucose = (Q_(glucose_mg_dl, "mg/dL") / molar_mass("glucose")).m_as("mmol/L")
    urea = (Q_(bun_mg_dl, "mg/dL") / molar_mass("urea nitrogen")).m_as("mmol/L")
    si = f.calculated_osmolality(sodium, glucose, urea)
    assert si == pytest.approx(conventional, abs=0.1)


def test_ethanol_molar_factor() -> None:
    # Ethanol adds mg/dL / 4.6 (molar, 46.07 g/mol; Nguyen MK et al. Front Med 2020, doi
    # 10.3389/fmed.2019.00306): 92 mg/dL adds 20.0; from the molar mass 920 / 46.07 = 19.97 mmol/L.
    ethanol = (Q_(92, "mg/dL") / molar_mass("ethanol")).m_as("mmol/L")
    base = f.calculated_osmolality(140, 5, 5)
    with_ethanol = f.calculated_osmolality(140, 5, 5, ethanol)
    assert with_ethanol - base == pytest.approx(920 / 46.07)
    assert with_ethanol - base == pytest.approx(92 / 4.6, abs=0.05)


def test_ethanol_empirical_factor() -> None:
    # Empirical mg/dL / 3.7, i.e. 1.25 x molar (Purssell RA et al. Ann Emerg Med 2001; tabulated in
    # Lynd LD et al. BMC Emerg Med 2008;8:5): 92 mg/dL adds 24.9 (92 / 3.7 = 24.86, 1.25 x 19.97 = 24.96).
    ethanol = (Q_(92, "mg/dL") / molar_mass("ethanol")).m_as("mmol/L")
    base = f.calculated_osmolality(140, 5, 5)
    empirical = f.calculated_osmolality(140, 5, 5, ethanol, f.ETHANOL_FACTOR_EMPIRICAL)
    assert empirical - base == pytest.approx(1.25 * 920 / 46.07)
    assert empirical - base == pytest.approx(92 / 3.7, rel=0.01)


def test_the_ethanol_factor_setting_reaches_the_check(tmp_path: Path, demo: Formulary) -> None:
    path = tmp_path / "empirical.toml"
    path.write_text(
        Path(demo.path).read_text(encoding="utf-8").replace('ethanol_factor = "molar"', 'ethanol_factor = "empirical"'),
        encoding="utf-8",
    )
    fields = {"weight": "70", "age": "40", "sex": "male", "sodium": "140", "glucose": "5", "urea": "5", "ethanol": "20"}
    # 290 + 20 (molar) and 290 + 1.25 x 20 = 315 (empirical).
    assert run_check(parse_check_request(fields), demo).calculated_osmolality_mosm_kg == pytest.approx(310.0)
    assert run_check(parse_check_request(fields), load_formulary(path)).calculated_osmolality_mosm_kg == (
        pytest.approx(315.0)
    )


def test_effective_osmolality_leaves_out_urea_and_ethanol() -> None:
    # Tonicity 2 Na + glucose (standard physiology: urea and ethanol cross cell membranes): 2 x 140 + 5 = 285.
    assert f.effective_osmolality(140, 5) == pytest.approx(285.0)


def test_osmolar_gap_is_measured_minus_calculated() -> None:
    # Gap = measured - calculated (McMaster Textbook of Internal Medicine): 310 - 290 = 20.
    gap = f.osmolar_gap(310, 290)
    assert gap == pytest.approx(20.0)
    assert f.osmolar_gap(285, 290) == pytest.approx(-5.0)


# --- amounts and rates -------------------------------------------------------------------------


def test_amount_volume_and_rate() -> None:
    # 350 mL of 20 % mannitol (200 g/L) holds 70 g; 70 g is 350 mL; 250 mL in 15 min is 1000 mL/h.
    assert f.amount_in_volume(350, 200) == pytest.approx(70.0)
    assert f.volume_for_amount(70, Q_(20, "percent_wv").m_as("g/L")) == pytest.approx(350.0)
    assert f.infusion_rate(250, 15) == pytest.approx(1000.0)


# --- scalars and arrays ------------------------------------------------------------------------

SODIUM = np.array([110.0, 140.0, 168.0, 125.0])
INFUSATE = np.array([513.0, 154.0, 0.0, 4004.0])
TBW = np.array([42.0, 35.0, 34.0, 21.5])
VOLUME = np.array([1.0, 0.25, 3.0, 0.03])
AGE = np.array([40.0, 70.0, 8.0, 35.0])
MALE = np.array([True, False, True, True])
HEIGHT = np.array([180.0, 165.0, 130.0, 180.0])
WEIGHT = np.array([70.0, 65.0, 25.0, 80.0])
GLUCOSE = np.array([5.0, 30.0, 6.0, 7.5])
UREA = np.array([5.0, 12.0, 3.0, 40.0])


def _columns() -> dict[str, tuple]:
    """Each formula as (arrays in, a function of row i giving the same call on scalars)."""
    return {
        "projected": (
            lambda: f.projected_sodium(SODIUM, INFUSATE, TBW, VOLUME),
            lambda i: f.projected_sodium(SODIUM[i], INFUSATE[i], TBW[i], VOLUME[i]),
        ),
        "per_litre": (
            lambda: f.sodium_change_per_litre(SODIUM, INFUSATE, TBW),
            lambda i: f.sodium_change_per_litre(SODIUM[i], INFUSATE[i], TBW[i]),
        ),
        "watson": (
            lambda: f.tbw_watson(AGE, HEIGHT, WEIGHT, MALE),
            lambda i: f.tbw_watson(AGE[i], HEIGHT[i], WEIGHT[i], bool(MALE[i])),
        ),
        "fraction": (
            lambda: f.tbw_from_fraction(WEIGHT, f.tbw_fraction(AGE, MALE)),
            lambda i: f.tbw_from_fraction(WEIGHT[i], f.tbw_fraction(AGE[i], bool(MALE[i]))),
        ),
        "osmolality": (
            lambda: f.calculated_osmolality(SODIUM, GLUCOSE, UREA),
            lambda i: f.calculated_osmolality(SODIUM[i], GLUCOSE[i], UREA[i]),
        ),
        "effective": (
            lambda: f.effective_osmolality(SODIUM, GLUCOSE),
            lambda i: f.effective_osmolality(SODIUM[i], GLUCOSE[i]),
        ),
        "volume_for_change": (
            lambda: f.volume_for_sodium_change(SODIUM, INFUSATE, TBW, 5),
            lambda i: f.volume_for_sodium_change(SODIUM[i], INFUSATE[i], TBW[i], 5),
        ),
    }


@pytest.mark.parametrize("name", list(_columns()))
def test_scalars_and_arrays_give_identical_results(name: str) -> None:
    as_array, as_scalar = _columns()[name]
    column = as_array()
    assert isinstance(column, np.ndarray)
    assert column.shape == SODIUM.shape
    for i in range(len(SODIUM)):
        scalar = as_scalar(i)
        assert isinstance(scalar, float)
        np.testing.assert_array_equal(scalar, column[i])


@pytest.mark.parametrize(
    ("mean_arterial", "intracranial", "expected"),
    [
        (82, 28, 54),  # CPP = MAP - ICP (Carney N et al. Neurosurgery 2017;80:6-15): arithmetic
        (90, 16, 74),  # the demo episode's last reading: arithmetic
    ],
)
def test_cerebral_perfusion_pressure_is_map_minus_icp(
    mean_arterial: float, intracranial: float, expected: float
) -> None:
    assert f.cerebral_perfusion_pressure(mean_arterial, intracranial) == expected
    # Whole columns at once, as the course timeline uses it.
    column = f.cerebral_perfusion_pressure(np.array([82.0, 90.0]), np.array([28.0, 16.0]))
    assert column.tolist() == [54.0, 74.0]
