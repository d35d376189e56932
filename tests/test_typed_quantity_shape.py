"""Typed quantities are one number then a unit; anything else is an InputError, never a crash or a misreading."""

from __future__ import annotations

import pytest

from osmodose.case.inputs import parse_check_request
from osmodose.errors import InputError
from osmodose.science.units import parse_quantity

BASE = {"age": "45", "sex": "male", "sodium": "141"}


@pytest.mark.parametrize(
    ("typed", "message"),
    [
        # A decimal comma: pint drops the comma, so "7,5 kg" read as 75 kg (tenfold).
        ("7,5 kg", "weight: 7,5 kg has a comma (accepted: a number with a decimal point, e.g. 7.5 kg)"),
        # A thousands space: "1 500" read as 1 x 500.
        ("1 500 g", "weight: 1 500 g has more than one number (accepted: one number and a unit, e.g. 7.5 kg)"),
        ("1.5.2 kg", "weight: 1.5.2 kg has more than one number (accepted: one number and a unit, e.g. 7.5 kg)"),
        # A unit alone was read as 1 of it: "lb" gave a 0.45 kg patient.
        ("lb", "weight: lb does not start with a number (accepted: a number in kg)"),
        # Half-typed text, as the app sees it key by key: pint's tokenizer raised AssertionError.
        ("70 kg/", "weight: 70 kg/ is not a quantity osmodose can read (accepted: kg)"),
        ("70 *", "weight: 70 * is not a quantity osmodose can read (accepted: kg)"),
    ],
)
def test_weight_text_that_is_not_one_number_and_a_unit_is_refused(typed: str, message: str) -> None:
    with pytest.raises(InputError) as caught:
        parse_check_request({**BASE, "weight": typed})
    assert str(caught.value) == message


def test_dividing_by_zero_in_typed_text_is_an_input_error() -> None:
    with pytest.raises(InputError) as caught:
        parse_quantity("dose", "1 g/(0 kg)", "g", ("g", "g/kg"))
    assert caught.value.field == "dose"


def test_half_typed_glucose_in_mg_per_dl_is_an_input_error() -> None:
    with pytest.raises(InputError) as caught:
        parse_check_request({**BASE, "weight": "70", "glucose": "108 mg/"})
    assert str(caught.value) == "glucose: 108 mg/ is not a quantity osmodose can read (accepted: mmol/L or mg/dL)"


@pytest.mark.parametrize(
    ("typed", "kg"),
    [
        ("70", 70.0),
        ("7.5 kg", 7.5),
        (".5 kg", 0.5),
        ("7500 g", 7.5),
        # 1 lb = 0.45359237 kg exactly (international yard and pound agreement, 1959).
        ("176lb", 176 * 0.45359237),
        ("1.5e1 kg", 15.0),
    ],
)
def test_ordinary_weights_still_read(typed: str, kg: float) -> None:
    assert parse_check_request({**BASE, "weight": typed}).patient.weight_kg == pytest.approx(kg)
