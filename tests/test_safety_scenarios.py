"""Dangerous situations that once came out green or released, each now giving its finding, error or hold.

Run through the command line as a user would, on the demo formulary (an invented unit); the rules'
numbers and sources are in test_patient_rules.py, test_formulary_guards.py and test_verify_leaving_out.py.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from osmodose.cli.main import main
from osmodose.formulary import demo_formulary_path
from tests.formulary_files import write

MAN = ["--weight", "70", "--age", "45", "--sex", "male"]


def check_json(capsys: pytest.CaptureFixture[str], *args: str) -> tuple[int, dict]:
    code = main(["check", *args, "--json"])
    return code, json.loads(capsys.readouterr().out)


def codes(result: dict) -> dict[str, str]:
    return {f["code"]: f["severity"] for f in result["findings"]}


@pytest.mark.parametrize(
    ("sodium", "potassium", "expected"),
    [
        ("108", "2.4", {"hyponatraemia-profound": "warn", "hypokalaemia-severe": "warn"}),
        ("121", "3.2", {"hyponatraemia-profound": "warn"}),
        ("104", "3.0", {"hyponatraemia-profound": "warn"}),
    ],
)
def test_dangerous_labs_with_no_order_are_warned_never_ok(
    capsys: pytest.CaptureFixture[str], sodium: str, potassium: str, expected: dict
) -> None:
    code, result = check_json(capsys, *MAN, "--sodium", sodium, "--potassium", potassium)
    assert (code, result["status"], codes(result)) == (3, "warn", expected)


def test_saline_for_a_low_sodium_that_is_not_hypotonic_is_warned(capsys: pytest.CaptureFixture[str]) -> None:
    # Na 126, glucose 45 mmol/L: effective osmolality 2 x 126 + 45 = 297, not hypotonic (275: Spasovski 2014).
    code, result = check_json(capsys, *MAN, "--sodium", "126", "--glucose", "45", "--agent", "nacl-3",
                              "--target-rise", "6", "--duration", "60")  # fmt: skip
    assert code == 3
    assert codes(result)["hyponatraemia-not-hypotonic"] == "warn"
    # 45 mmol/L x 18.016 = 810.7 mg/dL: Katz 126 + 1.6 x 7.107 = 137.4; Hillier 126 + 2.4 x 7.107 = 143.1.
    assert result["corrected_sodium_mmol_l"] == {
        "katz": pytest.approx(137.37, abs=0.05),  # to 0.1 mmol/L in the JSON
        "hillier": pytest.approx(143.06, abs=0.05),
    }


def test_a_peripheral_bolus_of_3_percent_over_3_minutes_is_not_released(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    # 250 mL x 1027 mOsm/L / 3 min / 70 kg = 1.22 mOsm/kg/min, above the default warn limit of 0.7.
    args = ["verify", *MAN, "--sodium", "140", "--agent", "nacl-3", "--volume", "250", "--duration", "3",
            "--line", "peripheral", "--accept", "peripheral-osmolarity=large forearm vein, checked",
            "--initials", "AB", "--log", str(tmp_path / "log.jsonl"), "--json"]  # fmt: skip
    assert main(args) == 3
    record = json.loads(capsys.readouterr().out)["record"]
    assert record["decision"]["outcome"] == "held"
    assert record["decision"]["open_warnings"] == ["osmolar-rate-high"]


def test_a_tenfold_weight_slip_in_an_adult_is_refused(capsys: pytest.CaptureFixture[str]) -> None:
    code, result = check_json(capsys, "--weight", "9.5", "--age", "58", "--sex", "male", "--sodium", "140",
                              "--agent", "mannitol-20", "--dose", "0.5g/kg", "--duration", "20")  # fmt: skip
    assert (code, result["status"]) == (4, "refuse")
    assert codes(result)["weight-low-for-age"] == "refuse"


def test_body_water_overstated_in_obesity_is_warned_with_the_watson_figure(capsys: pytest.CaptureFixture[str]) -> None:
    woman = ["--weight", "150", "--age", "45", "--sex", "female", "--height", "160"]
    order = ["--agent", "nacl-3", "--target-rise", "6", "--duration", "60"]
    code, result = check_json(capsys, *woman, "--sodium", "120", *order)
    assert code == 3
    assert result["patient"]["bmi_kg_m2"] == pytest.approx(58.59, abs=0.01)
    finding = next(f for f in result["findings"] if f["code"] == "body-water-obesity")
    assert (
        "52.0 L by the Watson formula, with which this order changes sodium by +8.6 mmol/L instead of +6.0"
        in (finding["message"])
    )


def test_23_4_percent_with_no_line_is_noted_by_check_and_held_by_verify(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    code, result = check_json(capsys, *MAN, "--sodium", "150", "--agent", "nacl-23.4", "--volume", "30",
                              "--duration", "15")  # fmt: skip
    assert code == 0
    assert any(note.startswith("No line stated: nacl-23.4 is for a central line only") for note in result["notes"])
    args = ["verify", *MAN, "--sodium", "150", "--agent", "nacl-23.4", "--volume", "30", "--duration", "15",
            "--accept", "line-not-stated=central line in place", "--initials", "AB",
            "--log", str(tmp_path / "log.jsonl"), "--json"]  # fmt: skip
    assert main(args) == 3
    decision = json.loads(capsys.readouterr().out)["record"]["decision"]
    assert (decision["outcome"], decision["must_state"]) == ("held", ["line-not-stated"])


@pytest.mark.parametrize(
    ("old", "new", "key"),
    [
        ('sodium_refuse = "160 mmol/L"', 'sodium_refuse = "1600 mmol/L"', "limits.sodium_refuse"),
        ('dose_refuse = "1.5 g/kg"', 'dose_refuse = "15 g/kg"', "agents[5].dose_refuse"),
        ('max_rate = "180 mL/h"', 'max_rate = "18000 mL/h"', "agents[4].max_rate"),
        ('concentration = "234 g/L"\nroute = "central-only"\npresentations = ["30 mL"]\ndose_warn = "0.5 mL/kg"\n'
         'dose_refuse = "1 mL/kg"\nmax_rate = "180 mL/h"\nadult_only = true\nsodium = "4 mEq/mL"',
         'concentration = "2.34% w/v"\nroute = "central-only"\npresentations = ["30 mL"]\ndose_warn = "0.5 mL/kg"\n'
         'dose_refuse = "1 mL/kg"\nmax_rate = "180 mL/h"\nadult_only = true', "agents[4].concentration"),
    ],
)  # fmt: skip
def test_a_slipped_figure_in_a_unit_file_makes_it_invalid(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], old: str, new: str, key: str
) -> None:
    text = demo_formulary_path().read_text(encoding="utf-8")
    assert text.count(old) == 1
    path = write(tmp_path, text.replace(old, new))
    assert main(["formulary", "validate", str(path)]) == 1
    lines = capsys.readouterr().out.splitlines()
    assert f": {key}: " in lines[0]  # the error first, then the demo's peripheral warnings, then the verdict
    assert lines[-1].startswith(f"{path}: not valid: 1 error (")


@pytest.mark.parametrize(
    ("agent", "osmolarity"),
    [
        # 0.9 % sodium chloride with 20 mmol/L KCl: 308 + 2 x 20 = 348 mOsm/L (product labels).
        ('solute = "sodium chloride"\nconcentration = "0.9% w/v"\nsodium = "154 mmol/L"\npotassium = "20 mmol/L"', 348),
        # Dextrose 5 % weighed as the monohydrate: 50 / 198.17 x 1000 = 252 mOsm/L.
        ('solute = "glucose monohydrate"\nconcentration = "5% w/v"', 252),
    ],
)  # fmt: skip
def test_real_labels_that_were_rejected_now_load(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], agent: str, osmolarity: int
) -> None:
    text = (
        '[formulary]\nname = "Test unit (invented)"\nversion = "1"\n\n[[agents]]\nid = "bag"\nlabel = "Bag"\n'
        f'{agent}\nroute = "any-line"\nosmolarity = "{osmolarity} mOsm/L"\n'
    )
    path = write(tmp_path, text)
    assert main(["formulary", "validate", str(path)]) == 0


def test_the_hypokalaemia_note_at_sodium_136_no_longer_says_refused_above_8(capsys: pytest.CaptureFixture[str]) -> None:
    _code, result = check_json(capsys, *MAN, "--sodium", "136", "--potassium", "3.2", "--agent", "nacl-3",
                               "--volume", "500", "--duration", "60")  # fmt: skip
    notes = result["notes"]
    assert not any("the rise is refused above 8" in note for note in notes)
    assert any("applies only where the 24 h rise limits do" in note for note in notes)
