"""Urine losses through `check`, `verify` and `audit`: the same balance, the same words, everywhere.

Patients and orders are invented; the figures are the check values of the full balance (Barsoum NR, Levine
BS. Nephrol Dial Transplant 2002;17:1176) worked by hand.
"""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path

import pytest

from osmodose.cli.main import main

MAN = ["--weight", "70", "--age", "45", "--sex", "male"]  # TBW 0.6 x 70 = 42 L (Adrogue & Madias 2000)
URINE = ["--urine-volume", "1L", "--urine-sodium", "60", "--urine-potassium", "40"]  # Na + K 100


def test_check_json_has_the_projection_with_and_without_losses(capsys: pytest.CaptureFixture[str]) -> None:
    code = main(["check", *MAN, "--sodium", "110", "--agent", "nacl-3", "--volume", "1L", *URINE, "--json"])
    shown = json.loads(capsys.readouterr().out)
    assert code == 4  # 14.3 mL/kg of 3 % is past the demo's refuse limit of 10 mL/kg
    # (110 x 42 + 513 - 100) / 42 = 119.83 with the urine; 110 + 403 / 43 = 119.37 without.
    # The JSON gives each figure to its declared precision (sodium 0.1 mmol/L, free water 0.01 L).
    assert shown["projected_sodium_mmol_l"] == round(5033 / 42, 1)
    assert shown["projected_sodium_without_losses_mmol_l"] == round(110 + 403 / 43, 1)
    assert shown["urine"] == {"volume_ml": 1000.0, "sodium_mmol_l": 60.0, "potassium_mmol_l": 40.0}
    assert shown["electrolyte_free_water_clearance_l"] == round(1 - 100 / 110, 2)
    low, high = shown["projected_sodium_range_mmol_l"]
    assert low < shown["projected_sodium_mmol_l"] < high
    assert {"free_water_deficit_l", "volumes_for_daily_fall", "equiosmolar"} <= set(shown)


def test_check_report_shows_the_range_and_the_urine(capsys: pytest.CaptureFixture[str]) -> None:
    main(["check", *MAN, "--sodium", "110", "--agent", "nacl-3", "--volume", "1L", *URINE])
    out = capsys.readouterr().out
    assert "projected Na 119.8 mmol/L (+9.8 mmol/L; range +7.0 to +23.6)" in out
    assert (
        "urine over the infusion: 1000 mL, Na + K 100 mmol/L; electrolyte-free water 0.09 L; "
        "projected without these losses 119.4 mmol/L\n" in out
    )
    assert "The projection takes out the urine given (1000 mL with Na + K 100 mmol/L)" in out
    assert "The projection ignores ongoing losses" not in out  # said only without urine


def test_check_help_lists_the_urine_options(capsys: pytest.CaptureFixture[str]) -> None:
    with pytest.raises(SystemExit):
        main(["check", "--help"])
    out = capsys.readouterr().out
    assert "--urine-volume VALUE" in out and "--urine-sodium VALUE" in out and "--urine-potassium VALUE" in out


def test_verify_recomputes_with_the_urine(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    log = tmp_path / "log.jsonl"
    args = ["verify", *MAN, "--sodium", "110", *URINE, "--agent", "nacl-3", "--volume", "250", "--initials", "AB"]
    main([*args, "--log", str(log), "--json"])
    record = json.loads(capsys.readouterr().out)["record"]
    # 110 + [0.25 x 403 - 1 x (100 - 110)] / (42 + 0.25 - 1) = 110 + 110.75 / 41.25 = 112.685.
    assert record["result"]["projected_sodium_mmol_l"] == round(110 + 110.75 / 41.25, 1)
    assert record["request"]["urine"]["volume_ml"] == 1000.0


def test_audit_rows_take_the_urine_columns_as_check_does(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    orders = tmp_path / "orders.csv"
    orders.write_text(
        "weight,age,sex,sodium,urine-volume[L],urine-sodium,urine-potassium,agent,volume\n"
        "70,45,male,110,1,60,40,nacl-3,1000\n"  # the check value: 119.83
        "70,45,male,110,,,,nacl-3,1000\n"  # no urine: 119.37
        "70,45,male,110,,60,,nacl-3,1000\n"  # sodium without a volume: check's words
        "70,45,male,110,1,,,nacl-3,1000\n"  # a volume without its sodium: check's words
        "70,45,male,110,20,60,,nacl-3,1000\n",  # half the body water or more: check's words
        encoding="utf-8",
    )
    out = tmp_path / "results.csv"
    main(["audit", str(orders), "--out", str(out)])
    err = capsys.readouterr().err
    rows = list(csv.DictReader(io.StringIO(out.read_text(encoding="utf-8"))))
    assert float(rows[0]["projected_sodium_mmol_l"]) == round(5033 / 42, 1)
    assert float(rows[0]["projected_sodium_without_losses_mmol_l"]) == round(110 + 403 / 43, 1)
    assert float(rows[0]["electrolyte_free_water_clearance_l"]) == round(1 - 100 / 110, 2)
    assert float(rows[1]["projected_sodium_mmol_l"]) == round(110 + 403 / 43, 1)
    assert rows[1]["electrolyte_free_water_clearance_l"] == ""
    assert [r["status"] for r in rows[2:]] == ["error"] * 3
    assert rows[2]["reason"] == (
        "urine-sodium: 60 needs a urine volume (accepted: a urine volume with it, e.g. --urine-volume 800)"
    )
    assert rows[3]["reason"] == (
        "urine-sodium: is required with a urine volume (accepted: the urine's sodium in mmol/L, e.g. --urine-sodium 40)"
    )
    assert rows[4]["reason"] == (
        "urine-volume: 20 L is half the total body water or more (38.2 L at the low end of its range): "
        "not a urine output over one infusion (accepted: less than 19120 mL)"
    )
    assert "row 4: urine-sodium: 60 needs a urine volume" in err
