"""An order exactly at a limit is not above it, whatever rounding the unit conversions leave."""

from __future__ import annotations

import pytest

from osmodose.case.inputs import parse_check_request
from osmodose.check.run import run_check


@pytest.mark.parametrize(
    ("agent", "dose", "status", "codes"),
    [
        # 1.5 g/kg x 40.2 kg = 60.3 g = 301.5 mL of 20 % (200 g/L) = 60.3 g again = 1.5 g/kg on paper;
        # in floating point it came back as 1.5000000000000004 and crossed the demo refuse limit of 1.5 g/kg.
        # 1.5 is above the demo warn limit of 1 g/kg, so the order is warned, not refused.
        ("mannitol-20", "1.5g/kg", "warn", ["dose-per-kg"]),
        # 2 mmol/kg x 40.2 kg = 80.4 mmol = 80.4 mL of 8.4 % bicarbonate (1000 mmol/L) = 2 mmol/kg:
        # exactly the demo warn limit of 2 mmol/kg, so no finding (it came back as 2.0000000000000004).
        ("bicarb-8.4", "2mmol/kg", "ok", []),
    ],
)
def test_dose_exactly_at_a_limit_does_not_cross_it(demo, agent: str, dose: str, status: str, codes: list) -> None:
    # Glucose and urea make the osmolality known (2 x 140 + 5 + 5 = 290), so mannitol raises no
    # osmolality-unknown warning and the dose is the only thing judged.
    fields = {"weight": "40.2", "age": "40", "sex": "male", "sodium": "140", "glucose": "5", "urea": "5",
              "agent": agent, "dose": dose}  # fmt: skip
    result = run_check(parse_check_request(fields), demo)
    assert result.status == status
    assert [f.code for f in result.findings] == codes
    assert [f.severity for f in result.findings] == (["warn"] if codes else [])
