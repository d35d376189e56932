"""Malformed quantity text is an InputError naming the field, never a traceback."""

from __future__ import annotations

import pytest

from osmodose.errors import InputError
from osmodose.science.units import parse_quantity


@pytest.mark.parametrize(
    ("typed", "problem"),
    [
        ("1 mL/", "is not a quantity osmodose can read (accepted: mL)"),  # a dangling operator: pint asserts
        ("4-", "is not a quantity osmodose can read (accepted: mL)"),
        (":", "does not start with a number (accepted: a number in mL)"),
        # pint would evaluate the arithmetic and divide by zero
        ("1/0 mL", "has more than one number (accepted: one number and a unit, e.g. 7.5 mL)"),
    ],
)
def test_malformed_quantity_text_is_an_input_error(typed: str, problem: str) -> None:
    with pytest.raises(InputError) as caught:
        parse_quantity("volume", typed, "mL")
    assert str(caught.value) == f"volume: {typed} {problem}"


@pytest.mark.parametrize("typed", ["7^7^5", "6**666 mL"])
def test_number_too_large_for_a_float_is_an_input_error(typed: str) -> None:
    # 7^7^5 is an integer of about 10^14000: no float holds it. Chained or long powers are refused
    # before pint evaluates them.
    with pytest.raises(InputError) as caught:
        parse_quantity("volume", typed, "mL")
    assert str(caught.value) == f"volume: {typed} is not a quantity osmodose can read (accepted: mL)"
