"""Units: the trade's units, round-trips, one registry, and the exact messages for bad text."""

from __future__ import annotations

import re
from pathlib import Path

import pint
import pytest

from osmodose.errors import InputError
from osmodose.science import chemistry, formulas
from osmodose.science.units import Q_, is_per_mass, parse_quantity, ureg

PACKAGE = Path(__file__).resolve().parent.parent / "osmodose"


# --- round-trips -------------------------------------------------------------------------------


def test_pounds_to_kilograms_round_trip() -> None:
    # 1 lb = 0.45359237 kg exactly (international yard and pound agreement, 1959; NIST SP 811):
    # 176 x 0.45359237 = 79.83225712 kg.
    weight = parse_quantity("weight", "176lb", "kg")
    assert weight.m_as("kg") == pytest.approx(79.83225712, abs=1e-9)
    assert Q_(weight.m_as("kg"), "kg").m_as("lb") == pytest.approx(176.0, abs=1e-9)


def test_glucose_mg_per_dl_to_mmol_per_l_round_trip() -> None:
    # 126 mg/dL = 1260 mg/L; / 180.16 g/mol (glucose, CIAAW atomic weights) = 6.9938 mmol/L.
    # The conventional divisor is 18 (Cleveland Clinic Journal of Medicine): 126 / 18 = 7.0.
    mass = parse_quantity("glucose", "126mg/dL", "mmol/L", ("mmol/L", "mg/dL"))
    molar = (mass / chemistry.molar_mass("glucose")).to("mmol/L")
    assert molar.magnitude == pytest.approx(1260 / 180.16, rel=1e-12)
    assert molar.magnitude == pytest.approx(126 / 18, abs=0.01)
    back = (molar * chemistry.molar_mass("glucose")).m_as("mg/dL")
    assert back == pytest.approx(126.0, rel=1e-12)


def test_milliequivalents_per_millilitre_to_millimoles_per_litre() -> None:
    # 23.4 % saline is labelled 4 mEq/mL (product labels); for a monovalent ion 1 mEq = 1 mmol,
    # so 4 mEq/mL = 4000 mmol/L.
    quantity = parse_quantity("sodium", "4 mEq/mL", "mmol/L")
    assert quantity.m_as("mmol/L") == pytest.approx(4000.0, rel=1e-12)
    assert Q_(4000, "mmol/L").m_as("mEq/mL") == pytest.approx(4.0, rel=1e-12)


@pytest.mark.parametrize(
    ("text", "grams_per_litre"),
    [
        # % w/v is grams per 100 mL (pharmacy definition): x % = 10x g/L.
        ("0.9% w/v", 9.0),
        ("3 % w/v", 30.0),
        ("20%(w/v)", 200.0),
        ("23.4 % W/V", 234.0),
    ],
)
def test_percent_weight_per_volume_is_grams_per_100_ml(text: str, grams_per_litre: float) -> None:
    quantity = parse_quantity("concentration", text, "g/L", ("g/L",))
    assert quantity.m_as("g/L") == pytest.approx(grams_per_litre, rel=1e-12)
    assert Q_(grams_per_litre, "g/L").m_as("percent_wv") == pytest.approx(grams_per_litre / 10, rel=1e-12)


def test_bare_percent_is_weight_per_volume_only_where_the_field_says_so() -> None:
    # A formulary concentration "3%" means % w/v; elsewhere "%" is a plain fraction (wrong unit).
    assert parse_quantity("c", "3%", "g/L", ("g/L",), percent_is_wv=True).m_as("g/L") == pytest.approx(30.0)
    with pytest.raises(InputError) as caught:
        parse_quantity("c", "3%", "g/L", ("g/L",))
    assert str(caught.value) == "c: 3% is in the wrong unit (accepted: g/L)"


@pytest.mark.parametrize(
    ("text", "per_kg"),
    [
        ("5 mL/kg", True),
        ("1 g/kg", True),  # pint reduces g/kg to a pure number: the written unit must decide
        ("2 mmol/kg", True),
        ("0.5 g/lb", True),
        ("5 mL", False),
        ("50 g", False),
        ("4 mEq/mL", False),
        ("234 g/L", False),
    ],
)
def test_per_kg_is_read_from_the_written_unit(text: str, per_kg: bool) -> None:
    quantity = parse_quantity("dose", text, "g", ("g", "mL", "mmol", "g/kg", "mL/kg", "mmol/kg", "mmol/L", "g/L"))
    assert is_per_mass(quantity) is per_kg


def test_a_bare_number_takes_the_fields_usual_unit() -> None:
    assert parse_quantity("weight", "70", "kg").m_as("kg") == 70.0
    assert parse_quantity("weight", 70, "kg").m_as("kg") == 70.0
    assert parse_quantity("volume", "250", "mL").m_as("L") == pytest.approx(0.25)


# --- one registry ------------------------------------------------------------------------------


def test_every_returned_quantity_belongs_to_the_package_registry() -> None:
    returned = [
        parse_quantity("weight", "176lb", "kg"),
        parse_quantity("weight", 70, "kg"),
        chemistry.molar_mass("sodium chloride"),
    ]
    for quantity in returned:
        assert quantity._REGISTRY is ureg


def test_the_formulas_take_and_give_plain_numbers() -> None:
    # Units are read at the edges; the engine's formulas work on canonical floats, so no pint
    # quantity crosses into them (a quantity would make every case cost a unit conversion).
    figures = [
        formulas.tbw_from_fraction(70, 0.6),
        formulas.calculated_osmolality(140, 5, 5),
        formulas.projected_sodium(110, 513, 42, 1),
        formulas.infusion_rate(250, 15),
    ]
    assert all(type(figure) is float for figure in figures)


def test_a_quantity_from_another_registry_comes_back_in_ours() -> None:
    # Quantities of two registries refuse to combine (pint raises ValueError), so a quantity a
    # caller built elsewhere must be re-expressed in the package registry, not passed through.
    other = pint.UnitRegistry()
    weight = parse_quantity("weight", other.Quantity(70, "kg"), "kg")
    assert weight._REGISTRY is ureg
    assert weight.m_as("kg") == 70.0
    assert (weight / Q_(1, "kg")).m_as("") == 70.0


def test_only_the_units_module_builds_a_registry() -> None:
    builders = [
        path.relative_to(PACKAGE).as_posix()
        for path in PACKAGE.rglob("*.py")
        if re.search(r"UnitRegistry\s*\(", path.read_text(encoding="utf-8"))
    ]
    assert builders == ["science/units.py"]


def test_the_trades_units_are_defined() -> None:
    assert Q_(1, "mOsm").m_as("Osm") == pytest.approx(1e-3)
    assert Q_(1, "mEq").m_as("mmol") == 1.0
    assert Q_(1, "percent_wv").m_as("g/L") == pytest.approx(10.0)
    # osmole is its own dimension, so mOsm/kg can never be mistaken for mmol/kg.
    assert Q_(1, "mOsm/kg").dimensionality != Q_(1, "mmol/kg").dimensionality


# --- messages, word for word -------------------------------------------------------------------


@pytest.mark.parametrize(
    ("raw", "message"),
    [
        ("30 mL", "weight: 30 mL is in the wrong unit (accepted: kg)"),
        ("70 mmol/L", "weight: 70 mmol/L is in the wrong unit (accepted: kg)"),
        ("70 kgg", "weight: 70 kgg is not a quantity osmodose can read (accepted: kg)"),
        ("70 (", "weight: 70 ( is not a quantity osmodose can read (accepted: kg)"),
        ("abc", "weight: abc does not start with a number (accepted: a number in kg)"),
        ("", "weight: is empty (accepted: a number in kg)"),
        ("nan", "weight: nan does not start with a number (accepted: a number in kg)"),
        ("1e999", "weight: 1e999 is not a finite number (accepted: a number in kg)"),
        ("1e308*10 kg", "weight: 1e308*10 kg has more than one number (accepted: one number and a unit, e.g. 7.5 kg)"),
    ],
)
def test_bad_weight_text_gives_the_exact_message(raw: str, message: str) -> None:
    with pytest.raises(InputError) as caught:
        parse_quantity("weight", raw, "kg")
    assert str(caught.value) == message
    assert caught.value.field == "weight"


def test_several_accepted_units_are_listed() -> None:
    with pytest.raises(InputError) as caught:
        parse_quantity("glucose", "5 kg", "mmol/L", ("mmol/L", "mg/dL"))
    assert str(caught.value) == "glucose: 5 kg is in the wrong unit (accepted: mmol/L or mg/dL)"


@pytest.mark.parametrize("raw", ["5 //", "5 /", "1/0", "0/0 kg", "7/0 kg", "722^777", "535**5**3"])
def test_text_that_trips_the_unit_parser_is_an_input_error(raw: str) -> None:
    # pint's tokenizer asserts on a stray operator and its evaluator divides and overflows:
    # each must be an InputError naming the field, never a traceback.
    with pytest.raises(InputError) as caught:
        parse_quantity("weight", raw, "kg")
    assert caught.value.field == "weight"


@pytest.mark.parametrize("raw", ["kg", "lb", "mL", " kg "])
def test_a_unit_without_a_number_is_refused_not_read_as_one(raw: str) -> None:
    # pint reads "kg" alone as 1 kg; a weight nobody typed must never reach the engine.
    with pytest.raises(InputError) as caught:
        parse_quantity("weight", raw, "kg", ("kg", "mL"))
    assert str(caught.value) == f"weight: {raw} does not start with a number (accepted: a number in kg or mL)"


@pytest.mark.parametrize("raw", ["70kg", "+70 kg", ".5 kg", "-4 kg", "1e2 g"])
def test_a_number_first_is_read(raw: str) -> None:
    assert parse_quantity("weight", raw, "kg").dimensionality == Q_(1, "kg").dimensionality


@pytest.mark.parametrize("raw", ["9**99999", "2^99999 kg", "9**9**9", "9^9^9 kg"])
def test_a_power_beyond_what_a_quantity_needs_is_refused_before_pint_evaluates_it(raw: str) -> None:
    # pint computes powers with exact integers: "9**9**9" has 370 million digits and ran for
    # minutes (a frozen command line or app). A quantity needs one small power at most ("dm**3").
    with pytest.raises(InputError) as caught:
        parse_quantity("weight", raw, "kg")
    assert str(caught.value) == f"weight: {raw} is not a quantity osmodose can read (accepted: kg)"


def test_a_bracketed_power_counts_as_a_second_number() -> None:
    with pytest.raises(InputError) as caught:
        parse_quantity("weight", "9**(9)", "kg")
    assert str(caught.value) == "weight: 9**(9) has more than one number (accepted: one number and a unit, e.g. 7.5 kg)"


@pytest.mark.parametrize(("raw", "litres"), [("1 dm**3", 1.0), ("1 dm^3", 1.0), ("2 m**3", 2000.0)])
def test_one_small_power_is_still_read(raw: str, litres: float) -> None:
    assert parse_quantity("volume", raw, "mL").m_as("L") == pytest.approx(litres)
