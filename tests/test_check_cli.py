"""`osmodose check`: exit codes worked by hand, the --json shape, and one stderr line for bad input.

Most cases run the entry point in-process (`osmodose.cli.main.main`) with capsys; a few run
`python -m osmodose` as a user does. Patient unless stated: man of 40, 70 kg, TBW 0.6 x 70 = 42 L
(Adrogue HJ, Madias NE. N Engl J Med 2000;342:1581-9).
"""

from __future__ import annotations

import hashlib
import json
import shutil
from pathlib import Path
from typing import Any

import pytest

from osmodose.check.results import CAUTION
from osmodose.check.run import MANNITOL_NOTE, PROJECTION_NOTE
from osmodose.cli.main import main
from osmodose.formulary import Formulary, demo_formulary_path
from tests.conftest import run_cli

MAN = ["--weight", "70", "--age", "40", "--sex", "male"]


def cli(capsys: pytest.CaptureFixture[str], *args: str) -> tuple[int, str, str]:
    try:
        code = main(["check", *args])
    except SystemExit as exit_:  # argparse errors and --help
        code = int(exit_.code or 0)
    captured = capsys.readouterr()
    return code, captured.out, captured.err


def as_json(capsys: pytest.CaptureFixture[str], *args: str) -> tuple[int, dict[str, Any]]:
    code, out, err = cli(capsys, *args, "--json")
    assert err == ""
    return code, json.loads(out)


# --- bad input: one line on stderr, exit 2 -----------------------------------------------------

_DOSE_ACCEPTED = "g, mL, mmol or mOsm, absolute or per kg (1 g/kg, 5 mL/kg, 50 g, 120 mmol)"
_ONE_MODE = "exactly one of dose, volume, target-rise or target-sodium"
_KNOWN = "nacl-0.9, nacl-3, nacl-7.5, nacl-23.4, mannitol-20, bicarb-8.4, glucose-5, lactated-ringers"


@pytest.mark.parametrize(
    ("args", "line"),
    [
        (
            [*MAN, "--sodium", "1400"],
            "osmodose: sodium: 1400 is outside the plausible range (accepted: 90 to 200 mmol/L)",
        ),
        (
            ["--weight", "-4 kg", "--age", "40", "--sex", "male", "--sodium", "140"],
            "osmodose: weight: -4 kg is outside the plausible range (accepted: 0.3 to 400 kg)",
        ),
        (
            ["--weight", "30 mL", "--age", "40", "--sex", "male", "--sodium", "140"],
            "osmodose: weight: 30 mL is in the wrong unit (accepted: kg)",
        ),
        (
            ["--weight", "kg", "--age", "40", "--sex", "male", "--sodium", "140"],
            "osmodose: weight: kg does not start with a number (accepted: a number in kg)",
        ),
        (
            ["--weight", "70/0", "--age", "40", "--sex", "male", "--sodium", "140"],
            "osmodose: weight: 70/0 has more than one number (accepted: one number and a unit, e.g. 7.5 kg)",
        ),
        (
            [*MAN, "--sodium", "140", "--agent", "nacl-30", "--volume", "100"],
            f"osmodose: agent: nacl-30 is not an agent of this formulary (accepted: one of: {_KNOWN})",
        ),
        (
            [*MAN, "--sodium", "140", "--urea", "5", "--bun", "14"],
            "osmodose: bun: 14 cannot be given together with urea (accepted: urea or bun, not both)",
        ),
        (
            [*MAN, "--sodium", "140", "--agent", "nacl-3", "--dose", "5mL/kg", "--volume", "250"],
            f"osmodose: volume: 250 cannot be given together with dose (accepted: {_ONE_MODE})",
        ),
        (
            [*MAN, "--sodium", "140", "--agent", "nacl-3", "--dose", "5"],
            f"osmodose: dose: 5 has no unit (accepted: {_DOSE_ACCEPTED})",
        ),
        (
            [*MAN, "--sodium", "140", "--agent", "nacl-0.9", "--target-rise", "20"],
            "osmodose: target-rise: 20 cannot be reached with nacl-0.9: its sodium + potassium is 154 mmol/L "
            "against serum 140 mmol/L (accepted: a change toward the infusate's sodium, smaller than the difference)",
        ),
        (
            [*MAN, "--sodium", "140", "--tbw-method", "watson"],
            "osmodose: height: is required for the Watson formula (accepted: a height in cm, or tbw-method fraction)",
        ),
        (
            ["--weight", "70", "--sex", "male", "--sodium", "140"],
            "osmodose check: the following arguments are required: --age (see osmodose check --help)",
        ),
        (
            [*MAN, "--sodium", "140", "--line", "arterial"],
            "osmodose: line: arterial is not a line osmodose knows (accepted: central or peripheral)",
        ),
    ],
)
@pytest.mark.parametrize("json_flag", [[], ["--json"]])
def test_bad_input_is_one_stderr_line_and_exit_two(
    capsys: pytest.CaptureFixture[str], args: list[str], line: str, json_flag: list[str]
) -> None:
    code, out, err = cli(capsys, *args, *json_flag)
    assert (code, out, err) == (2, "", line + "\n")
    assert "Traceback" not in err


def test_a_missing_formulary_file_is_one_line(capsys: pytest.CaptureFixture[str], tmp_path: Path) -> None:
    missing = tmp_path / "nowhere.toml"
    code, out, err = cli(capsys, "--formulary", str(missing), *MAN, "--sodium", "140")
    assert (code, out) == (2, "")
    assert err == f"osmodose: formulary {missing}: cannot be read: No such file or directory\n"


def test_bad_input_through_python_dash_m() -> None:
    done = run_cli("check", *MAN, "--sodium", "140", "--agent", "nacl-3", "--dose", "5")
    assert done.returncode == 2
    assert done.stdout == ""
    assert done.stderr == f"osmodose: dose: 5 has no unit (accepted: {_DOSE_ACCEPTED})\n"


# --- exit codes worked by hand against the demo formulary --------------------------------------


def test_exit_zero_for_mannitol_one_gram_per_kg(capsys: pytest.CaptureFixture[str]) -> None:
    # Mannitol 1 g/kg (Brain Trauma Foundation: 0.25-1 g/kg) for 70 kg = 70 g = 350 mL of 20 % (200 g/L).
    # Labs: 2 x 140 + 5 + 5 = 290 calculated, 295 measured, gap 5 (< 20); 295 < 310. Dose 1 g/kg is at,
    # not above, the demo warn limit of 1 g/kg. Nothing fires: exit 0.
    code, result = as_json(
        capsys, *MAN, "--sodium", "140", "--glucose", "5", "--urea", "5", "--osmolality", "295",
        "--agent", "mannitol-20", "--dose", "1g/kg", "--duration", "20",
    )  # fmt: skip
    assert (code, result["status"], result["findings"]) == (0, "ok", [])
    dose = result["dose"]
    assert dose["volume_ml"] == pytest.approx(350.0)
    assert dose["solute_g"] == pytest.approx(70.0)
    assert dose["solute_g_per_kg"] == pytest.approx(1.0)
    assert dose["volume_ml_per_kg"] == pytest.approx(5.0)
    assert dose["osmoles_mosm"] == 384.0  # 70 g / 182.17 g/mol = 384.26 mOsm, printed to whole mOsm
    assert dose["sodium_mmol"] == 0.0
    assert dose["rate_ml_h"] == pytest.approx(1050.0)  # 350 mL in 20 min
    assert result["calculated_osmolality_mosm_kg"] == pytest.approx(290.0)
    assert result["osmolar_gap_mosm_kg"] == pytest.approx(5.0)


def test_exit_three_for_three_percent_on_a_peripheral_line(capsys: pytest.CaptureFixture[str]) -> None:
    # 250 mL of 3 % (labelled 513 mmol/L, 1027 mOsm/L) at Na 130: rise 0.25 x 383 / 42.25 = +2.27;
    # 3.57 mL/kg < 5; but 1027 > 900 mOsm/L on a peripheral line: warn, exit 3.
    code, result = as_json(
        capsys, *MAN, "--sodium", "130", "--agent", "nacl-3", "--volume", "250", "--line", "peripheral"
    )
    assert code == 3
    assert result["status"] == "warn"
    assert [(f["code"], f["severity"]) for f in result["findings"]] == [("peripheral-osmolarity", "warn")]
    assert result["projected_sodium_rise_mmol_l"] == 2.3  # 0.25 x 383 / 42.25 = 2.266, to 0.1 mmol/L


def test_exit_four_for_a_central_only_vial_on_a_peripheral_line(capsys: pytest.CaptureFixture[str]) -> None:
    # 23.4 % saline: 30 mL through a central line (US Joint Trauma System guideline); peripheral is refused.
    code, result = as_json(
        capsys, *MAN, "--sodium", "140", "--agent", "nacl-23.4", "--volume", "30", "--line", "peripheral"
    )
    assert (code, result["status"]) == (4, "refuse")
    assert result["findings"][0]["code"] == "central-line-only"
    assert result["dose"]["sodium_mmol"] == pytest.approx(120.0)  # 30 mL x 4 mEq/mL


def test_plain_report_says_the_status_and_the_caution(capsys: pytest.CaptureFixture[str]) -> None:
    code, out, err = cli(capsys, *MAN, "--sodium", "161")
    assert (code, err) == (4, "")
    # Labs only: there is no order to "give as ordered", so the words say what the labs mean.
    # One word per status: REFUSE, never "[REFUSE] REFUSE".
    assert out.startswith("osmodose check  REFUSE: a hard limit is crossed by these labs; hold hyperosmolar therapy\n")
    assert "\n  REFUSE sodium-high: serum sodium 161.0 mmol/L is above the refuse limit of 160 mmol/L\n" in out
    assert "[REFUSE]" not in out
    assert out.endswith(CAUTION + "\n")


def test_target_rise_gives_the_volume(capsys: pytest.CaptureFixture[str]) -> None:
    # +5 mmol/L with 3 % (513) at Na 110: V = 5 x 42 / (513 - 110 - 5) = 210 / 398 L = 527.6 mL.
    _code, result = as_json(capsys, *MAN, "--sodium", "110", "--agent", "nacl-3", "--target-rise", "5")
    assert result["dose"]["volume_ml"] == 527.6  # 527.64 mL, to 0.1 mL
    assert result["projected_sodium_rise_mmol_l"] == pytest.approx(5.0)
    assert result["projected_sodium_mmol_l"] == pytest.approx(115.0)


# --- the JSON shape ----------------------------------------------------------------------------

REQUIRED_TOP = {
    "status",
    "findings",
    "formulary",
    "patient",
    "calculated_osmolality_mosm_kg",
    "osmolar_gap_mosm_kg",
    "dose",
    "sodium_change_per_litre_mmol_l",
    "projected_sodium_mmol_l",
    "projected_sodium_rise_mmol_l",
}
REQUIRED_FORMULARY = {"name", "version", "sha256"}
REQUIRED_PATIENT = {"weight_kg", "age_years", "sex", "total_body_water_l", "tbw_method"}
REQUIRED_DOSE = {
    "agent",
    "volume_ml",
    "solute_g",
    "sodium_mmol",
    "osmoles_mosm",
    "volume_ml_per_kg",
    "solute_g_per_kg",
    "rate_ml_h",
}
REQUIRED_FINDING = {"code", "severity", "message", "value", "limit"}


def test_json_has_every_required_key(capsys: pytest.CaptureFixture[str]) -> None:
    _code, result = as_json(
        capsys, *MAN, "--sodium", "150", "--glucose", "10", "--urea", "6", "--osmolality", "330",
        "--agent", "nacl-3", "--volume", "250", "--duration", "15", "--line", "peripheral",
    )  # fmt: skip
    assert set(result) >= REQUIRED_TOP
    assert set(result["formulary"]) >= REQUIRED_FORMULARY
    assert set(result["patient"]) >= REQUIRED_PATIENT
    assert set(result["dose"]) >= REQUIRED_DOSE
    assert result["findings"]
    for finding in result["findings"]:
        assert set(finding) >= REQUIRED_FINDING
        assert finding["severity"] in ("warn", "refuse")
    # Saline is judged by the sodium ceilings, not the mannitol osmolality hold (Hinson 2013: hold mannitol
    # above 320): the peripheral line and the gap of 14 with no mannitol (above the normal 10, McMaster) warn.
    assert result["status"] == "warn"
    assert [f["code"] for f in result["findings"]] == ["peripheral-osmolarity", "osmolar-gap-unexplained"]
    assert result["patient"] == {
        "weight_kg": 70.0,
        "age_years": 40.0,
        "sex": "male",
        "height_cm": None,
        "total_body_water_l": 42.0,
        "tbw_method": "fraction",
        "bmi_kg_m2": None,
    }
    assert result["dose"]["rate_ml_h"] == pytest.approx(1000.0)  # 250 mL in 15 min
    # 2 x 150 + 10 + 6 = 316 calculated; gap 330 - 316 = 14.
    assert result["calculated_osmolality_mosm_kg"] == pytest.approx(316.0)
    assert result["osmolar_gap_mosm_kg"] == pytest.approx(14.0)


def test_json_nulls_where_a_figure_cannot_be_computed(capsys: pytest.CaptureFixture[str]) -> None:
    # No glucose or urea: no calculated osmolality, no gap; no agent: no dose and no projection.
    _code, result = as_json(capsys, *MAN, "--sodium", "140", "--osmolality", "290")
    assert set(result) >= REQUIRED_TOP
    for key in (
        "calculated_osmolality_mosm_kg",
        "osmolar_gap_mosm_kg",
        "dose",
        "sodium_change_per_litre_mmol_l",
        "projected_sodium_mmol_l",
        "projected_sodium_rise_mmol_l",
    ):
        assert result[key] is None, key


def test_json_without_a_duration_has_a_null_rate(capsys: pytest.CaptureFixture[str]) -> None:
    _code, result = as_json(capsys, *MAN, "--sodium", "140", "--agent", "nacl-3", "--volume", "250")
    assert result["dose"]["rate_ml_h"] is None
    assert PROJECTION_NOTE in result["notes"]


def test_json_for_a_mixed_fluid_has_a_null_solute(capsys: pytest.CaptureFixture[str]) -> None:
    _code, result = as_json(capsys, *MAN, "--sodium", "125", "--agent", "lactated-ringers", "--volume", "1L")
    assert result["dose"]["solute_g"] is None
    assert result["dose"]["solute_g_per_kg"] is None
    # Na 130 + K 4 (label): (134 - 125) / 43 = +0.209 mmol/L.
    assert result["sodium_change_per_litre_mmol_l"] == 0.2  # 9 / 43 = 0.209, to 0.1 mmol/L


def test_mannitol_has_no_sodium_projection_and_says_why(capsys: pytest.CaptureFixture[str]) -> None:
    _code, result = as_json(capsys, *MAN, "--sodium", "140", "--agent", "mannitol-20", "--dose", "0.5g/kg")
    assert result["sodium_change_per_litre_mmol_l"] is None
    assert result["projected_sodium_mmol_l"] is None
    assert result["projected_sodium_rise_mmol_l"] is None
    assert MANNITOL_NOTE in result["notes"]
    assert PROJECTION_NOTE not in result["notes"]
    assert result["dose"]["volume_ml"] == pytest.approx(175.0)  # 35 g / 200 g/L


def test_sha256_is_that_of_the_file_used(capsys: pytest.CaptureFixture[str], tmp_path: Path, demo: Formulary) -> None:
    _code, result = as_json(capsys, *MAN, "--sodium", "140")
    assert result["formulary"]["sha256"] == hashlib.sha256(demo_formulary_path().read_bytes()).hexdigest()
    assert result["formulary"]["name"] == demo.name
    assert result["formulary"]["version"] == demo.version
    # A copy with one changed byte is another file, with another hash.
    copy = tmp_path / "unit.toml"
    shutil.copyfile(demo_formulary_path(), copy)
    copy.write_bytes(copy.read_bytes() + b"\n")
    _code, other = as_json(capsys, "--formulary", str(copy), *MAN, "--sodium", "140")
    assert other["formulary"]["sha256"] == hashlib.sha256(copy.read_bytes()).hexdigest()
    assert other["formulary"]["sha256"] != result["formulary"]["sha256"]


# --- python -m osmodose ------------------------------------------------------------------------


def test_python_dash_m_osmodose_runs_a_check() -> None:
    # 1 L of 3 % (513) at Na 110: (513 - 110) / 43 = +9.37 (Adrogue-Madias); 14.29 mL/kg is above the
    # demo refuse limit of 10 mL/kg: exit 4.
    done = run_cli("check", *MAN, "--sodium", "110", "--agent", "nacl-3", "--volume", "1 L", "--json")
    assert done.returncode == 4, done.stderr
    assert done.stderr == ""
    result = json.loads(done.stdout)
    assert result["sodium_change_per_litre_mmol_l"] == 9.4  # 9.37, to 0.1 mmol/L
    assert result["formulary"]["sha256"] == hashlib.sha256(demo_formulary_path().read_bytes()).hexdigest()


def test_help_exits_zero(capsys: pytest.CaptureFixture[str]) -> None:
    code, out, _err = cli(capsys, "--help")
    assert code == 0
    assert "--target-rise" in out


@pytest.mark.parametrize("before_subcommand", [True, False])
def test_the_formulary_option_is_honoured_before_or_after_the_subcommand(
    capsys: pytest.CaptureFixture[str], tmp_path: Path, before_subcommand: bool
) -> None:
    # `osmodose --formulary F check ...` used to fall back silently to the demo formulary.
    copy = tmp_path / "unit.toml"
    copy.write_bytes(demo_formulary_path().read_bytes().replace(b"2026-12-demo", b"2026-12-copy"))
    option = ["--formulary", str(copy)]
    argv = [*option, "check"] if before_subcommand else ["check", *option]
    code = main([*argv, *MAN, "--sodium", "140", "--json"])
    result = json.loads(capsys.readouterr().out)
    assert code == 0
    assert result["formulary"]["version"] == "2026-12-copy"
    assert result["formulary"]["sha256"] == hashlib.sha256(copy.read_bytes()).hexdigest()


def test_a_missing_formulary_before_the_subcommand_is_an_error(
    capsys: pytest.CaptureFixture[str], tmp_path: Path
) -> None:
    missing = tmp_path / "nowhere.toml"
    code = main(["--formulary", str(missing), "check", *MAN, "--sodium", "140"])
    captured = capsys.readouterr()
    assert (code, captured.out) == (2, "")
    assert captured.err == f"osmodose: formulary {missing}: cannot be read: No such file or directory\n"
