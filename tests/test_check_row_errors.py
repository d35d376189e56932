"""The errors a single check raises for an order that cannot be given (shared with the audit)."""

from __future__ import annotations

import pytest

from osmodose.case.inputs import parse_check_request
from osmodose.check.run import run_check
from osmodose.errors import InputError

BASE = {"weight": "70", "age": "40", "sex": "male", "sodium": "140"}


@pytest.mark.parametrize(
    ("order", "message"),
    [
        # 5 % glucose carries no sodium (0 mmol/L), so no volume raises serum 140 by 5.
        (
            {"agent": "glucose-5", "target-rise": "5"},
            "target-rise: 5 cannot be reached with glucose-5: its sodium + potassium is 0 mmol/L against serum "
            "140 mmol/L (accepted: a change toward the infusate's sodium, smaller than the difference)",
        ),
        # 10 g/kg x 70 kg = 700 g; 700 g / 200 g/L (20 % w/v) = 3.5 L, inside; 400 kg gives 20 L, outside.
        (
            {"agent": "mannitol-20", "dose": "10g/kg", "weight": "400"},
            "dose: 10g/kg comes to 20000 mL of mannitol-20, outside the plausible range (accepted: 0.1 to 5000 mL)",
        ),
        # 1e300 mL: shown in at most 5 significant digits, not as a 301-digit number.
        (
            {"agent": "nacl-3", "dose": "1e300mL"},
            "dose: 1e300mL comes to 1e+300 mL of nacl-3, outside the plausible range (accepted: 0.1 to 5000 mL)",
        ),
        # 0.0001 g/kg x 70 kg = 0.007 g; 0.007 g / 200 g/L = 0.035 mL, below 0.1 mL (once shown as "0 mL").
        (
            {"agent": "mannitol-20", "dose": "0.0001g/kg"},
            "dose: 0.0001g/kg comes to 0.035 mL of mannitol-20, outside the plausible range (accepted: 0.1 to 5000 mL)",
        ),
        (
            {"agent": "lactated-ringers", "dose": "10g"},
            "dose: 10g is in grams, but lactated-ringers is a mixed fluid (accepted: mL, mmol or mOsm)",
        ),
        (
            {"agent": "mannitol-20", "dose": "20mmol"},
            "dose: 20mmol is in mmol of sodium, but mannitol-20 has no sodium (accepted: g, mL or mOsm)",
        ),
        (
            {"agent": "mannitol-20", "target-rise": "4"},
            "target-rise: 4 cannot be used with mannitol-20: osmodose projects no sodium for it "
            "(accepted: dose or volume)",
        ),
        (
            {"tbw-method": "watson"},
            "height: is required for the Watson formula (accepted: a height in cm, or tbw-method fraction)",
        ),
    ],
)
def test_check_refuses_orders_that_cannot_be_given(demo, order: dict[str, str], message: str) -> None:
    with pytest.raises(InputError) as caught:
        run_check(parse_check_request({**BASE, **order}), demo)
    assert str(caught.value) == message
