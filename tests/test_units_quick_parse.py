"""A typed quantity read with its unit parsed once reads exactly as pint's own expression parser reads it.

The reference is pint's `UnitRegistry.parse_expression` (a general-purpose
library outside the project): for every number-and-unit text osmodose meets
in formularies and typed fields, the quick path must give the same magnitude
(same type, same value) and the same unit.
"""

from __future__ import annotations

import pytest
from hypothesis import given
from hypothesis import strategies as st

from osmodose.science.units import _number_and_unit, parse_quantity, ureg

UNITS = (
    "kg", "lb", "g", "mg", "year", "month", "cm", "m", "in", "mmol/L", "mEq/L", "mg/dL", "mOsm/kg", "mmol/kg",
    "mOsm/L", "g/L", "g/kg", "mL/kg", "mmol/kg", "mOsm/kg", "mL", "L", "min", "h", "mL/h", "mL/min", "percent_wv",
    "mg / dL", "mL/kg/h", "dm**3", "Eq/L", "mmol", "mOsm", "eV",
)  # fmt: skip
NUMBERS = ("0", "1", "7", "20", "-3", "0.5", ".5", "5.", "1e2", "1.5E-3", "23.4", "+2", "1e999", "123456789012")


@pytest.mark.parametrize("unit", UNITS)
@pytest.mark.parametrize("number", NUMBERS)
def test_number_and_unit_reads_as_pint_parse_expression(number: str, unit: str) -> None:
    text = f"{number} {unit}"
    quick = _number_and_unit(text)
    expected = ureg.parse_expression(text)
    assert quick is not None
    assert type(quick.magnitude) is type(expected.magnitude)
    assert quick.magnitude == expected.magnitude
    assert quick.units == expected.units


@given(
    st.floats(min_value=-1e6, max_value=1e6, allow_nan=False) | st.integers(-(10**9), 10**9),
    st.sampled_from(UNITS),
    st.sampled_from(("", " ", "  ")),
)
def test_any_number_with_a_known_unit_reads_as_pint_does(value: float, unit: str, gap: str) -> None:
    text = f"{value}{gap}{unit}"
    quick = _number_and_unit(text)
    if quick is None:  # a shape left to pint ("1e-05" is fine; "inf" is not a number here)
        return
    expected = ureg.parse_expression(text)
    assert (type(quick.magnitude), quick.magnitude, quick.units) == (
        type(expected.magnitude),
        expected.magnitude,
        expected.units,
    )


@pytest.mark.parametrize(
    "text",
    ["007 kg", "10000000000000000000001 g", "5 foo", "1 mL/", "2 dm^3", "kg", "1,5 kg", "1 mg per dL"],
)
def test_other_shapes_are_left_to_pint(text: str) -> None:
    assert _number_and_unit(text) is None


def test_errors_keep_their_words_when_the_unit_is_unknown() -> None:
    with pytest.raises(Exception) as caught:
        parse_quantity("weight", "5 foo", "kg")
    assert str(caught.value) == "weight: 5 foo is not a quantity osmodose can read (accepted: kg)"
