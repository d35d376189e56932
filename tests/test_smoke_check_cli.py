"""End-to-end smoke tests of `osmodose check` through a real subprocess."""

from __future__ import annotations

import json

from tests.conftest import run_cli


def test_check_json_for_one_litre_of_three_percent_saline() -> None:
    # 70 kg man, TBW 0.6 x 70 = 42 L, Na 110, 1 L of 3 % saline (513 mmol/L):
    # (513 - 110) / (42 + 1) = +9.37 mmol/L (Adrogue HJ, Madias NE. N Engl J Med 2000;342:1581-9).
    done = run_cli(
        "check",
        "--weight",
        "70",
        "--age",
        "40",
        "--sex",
        "male",
        "--sodium",
        "110",
        "--agent",
        "nacl-3",
        "--volume",
        "1 L",
        "--json",
    )
    assert done.returncode in (0, 3, 4), done.stderr
    result = json.loads(done.stdout)
    assert result["projected_sodium_rise_mmol_l"] == 9.4  # (513 - 110) / 43 = 9.37, printed to 0.1 mmol/L
    assert result["patient"]["total_body_water_l"] == 42.0


def test_check_rejects_implausible_sodium_with_exit_two() -> None:
    done = run_cli("check", "--weight", "70", "--age", "40", "--sex", "male", "--sodium", "1400")
    assert done.returncode == 2
    assert done.stderr == "osmodose: sodium: 1400 is outside the plausible range (accepted: 90 to 200 mmol/L)\n"
    assert "Traceback" not in done.stderr
