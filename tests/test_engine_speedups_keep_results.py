"""The engine's speed-ups change no result: unit codes, agent tables, remembered unit parsing."""

from __future__ import annotations

import numpy as np
import pytest

from osmodose.check.engine import DOSE_UNITS, dose_unit_codes
from osmodose.errors import InputError
from osmodose.science.units import Q_, parse_quantity


def test_dose_units_as_strings_or_codes_are_the_same_codes() -> None:
    units = np.array(["", "g", "mL", "mmol", "mOsm", "mmol/L", "mL"])
    assert dose_unit_codes(units).tolist() == [0, 1, 2, 3, 4, 5, 2]
    assert dose_unit_codes(np.arange(len(DOSE_UNITS))).tolist() == list(range(len(DOSE_UNITS)))


def test_remembered_unit_parsing_converts_as_before() -> None:
    # 1 mmol/L = 1000 umol/L; 70 kg = 70000 g (SI prefixes).
    for _ in range(2):
        assert Q_(1.0, "mmol/L").m_as("umol/L") == pytest.approx(1000.0)
        assert Q_(np.array([70.0]), "kg").m_as("g").tolist() == [70000.0]


def test_an_unknown_unit_is_refused_every_time() -> None:
    for _ in range(2):
        with pytest.raises(InputError) as caught:
            parse_quantity("weight", "70 stoneweight", "kg")
        assert str(caught.value) == "weight: 70 stoneweight is not a quantity osmodose can read (accepted: kg)"
