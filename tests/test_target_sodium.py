"""An absolute target sodium (`--target-sodium 134`), read by the core into the change it asks for.

Check values: the mass-balance projection solved for the volume, V = R x TBW / (C - Na - R)
(Chen S et al. Kidney360 2021;2:365-370), with TBW 0.6 x 70 = 42 L (Adrogue HJ, Madias NE.
N Engl J Med 2000) and 3 % saline at its label's 513 mmol/L sodium.  From Na 120 to a target of
126 is R = +6: V = 6 x 42 / (513 - 120 - 6) = 252 / 387 L = 651.2 mL.
"""

from __future__ import annotations

import contextlib
import io
import json
from pathlib import Path

import pytest

from osmodose.app.form_view import DOSE_MODES
from osmodose.app.view import asked_text, evaluate
from osmodose.case.fields import FIELDS
from osmodose.cli.main import main
from osmodose.formulary import Formulary
from osmodose.science.choices import DOSE_MODE

MAN = ["--weight", "70", "--age", "45", "--sex", "male"]


def run(*args: str) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        code = main(list(args))
    return code, out.getvalue(), err.getvalue()


def test_a_target_sodium_gives_the_volume_of_the_change_it_asks_for() -> None:
    code, out, _err = run("check", *MAN, "--sodium", "120", "--agent", "nacl-3", "--target-sodium", "126", "--json")
    result = json.loads(out)
    assert result["dose"]["volume_ml"] == 651.2  # 252 / 387 L
    assert result["projected_sodium_mmol_l"] == 126.0
    assert result["dose"]["requested"] == "target-sodium 126 (a change of +6.0 mmol/L)"
    # 651.2 mL is 9.30 mL/kg, above the demo's 5 mL/kg warn limit for 3 %: the same as asking for +6.
    _code, same, _err = run("check", *MAN, "--sodium", "120", "--agent", "nacl-3", "--target-rise", "6", "--json")
    assert code == 3
    assert json.loads(same)["dose"]["volume_ml"] == result["dose"]["volume_ml"]
    assert json.loads(same)["findings"] == result["findings"]


@pytest.mark.parametrize(
    ("sodium", "order", "message"),
    [
        (
            "120",
            ["--target-sodium", "120"],
            "target-sodium: 120 is the serum sodium already (120 mmol/L) (accepted: a target other than 120 mmol/L)",
        ),
        (
            "120",
            ["--target-sodium", "170"],
            "target-sodium: 170 is +50 mmol/L from the serum sodium of 120 mmol/L, outside the plausible change "
            "(accepted: a target from 90 to 150 mmol/L, within 30 mmol/L of the serum sodium)",
        ),
        (
            "120",
            ["--target-sodium", "250"],
            "target-sodium: 250 is outside the plausible range (accepted: 90 to 200 mmol/L)",
        ),
        (
            "120",
            ["--target-sodium", "126", "--volume", "250"],
            "target-sodium: 126 cannot be given together with volume "
            "(accepted: exactly one of dose, volume, target-rise or target-sodium)",
        ),
    ],
)
def test_a_target_sodium_that_cannot_be_ordered_names_the_field_as_typed(
    sodium: str, order: list[str], message: str
) -> None:
    assert run("check", *MAN, "--sodium", sodium, "--agent", "nacl-3", *order) == (2, "", f"osmodose: {message}\n")


def test_an_unreachable_target_sodium_says_so_in_its_own_words() -> None:
    # 5 % glucose carries no sodium: nothing raises serum sodium from 150 towards 160.
    code, _out, err = run("check", *MAN, "--sodium", "150", "--agent", "glucose-5", "--target-sodium", "160")
    assert (code, err) == (
        2,
        "osmodose: target-sodium: 160 cannot be reached with glucose-5: its sodium + potassium is 0 mmol/L against "
        "serum 150 mmol/L (accepted: a target between the serum sodium and the infusate's)\n",
    )


def test_the_dose_styles_and_the_app_select_offer_a_target_sodium() -> None:
    assert DOSE_MODE.values == ("dose", "volume", "target-rise", "target-sodium")
    assert ("target Na", "target-sodium") in DOSE_MODES
    assert ("target Na change", "target-rise") in DOSE_MODES
    assert FIELDS["target-sodium"].label == "target Na"


def test_the_app_names_an_amount_error_by_the_style_it_is_asked_as(demo: Formulary) -> None:
    form = {"weight": "70", "age": "45", "sex": "male", "sodium": "120", "agent": "nacl-3"}
    outcome = evaluate({**form, "dose-mode": "target-rise", "amount": "134"}, demo)
    # The screen names the amount by the style it is asked as, and says how to aim at a level.
    assert outcome.field == "amount"
    assert outcome.message == (
        "target Na change: 134 is outside the plausible range (accepted: -30 to 30 mmol/L); "
        "to aim at a sodium level, ask as target Na"
    )
    outcome = evaluate({**form, "dose-mode": "target-sodium", "amount": "134"}, demo)
    assert outcome.result is not None and outcome.result.projected_sodium_mmol_l == pytest.approx(134.0)
    assert asked_text(outcome.result) == "target Na 134 (a change of +14.0 mmol/L)"
    outcome = evaluate({**form, "dose-mode": "target-rise", "amount": "6"}, demo)
    assert outcome.result is not None and asked_text(outcome.result) == "target Na change 6"
    outcome = evaluate({**form, "dose-mode": "target-sodium", "amount": "120"}, demo)
    assert outcome.message == (
        "target Na: 120 is the serum sodium already (120 mmol/L) (accepted: a target other than 120 mmol/L)"
    )


def test_the_audit_reads_a_target_sodium_column_as_check_reads_the_option(tmp_path: Path) -> None:
    orders = tmp_path / "orders.csv"
    orders.write_text(
        "weight,age,sex,sodium,agent,target-sodium\n70,45,male,120,nacl-3,126\n70,45,male,120,nacl-3,120\n",
        encoding="utf-8",
    )
    code, out, err = run("audit", str(orders), "--json")
    rows = json.loads(out)["rows"]
    assert code == 1
    assert (rows[0]["status"], rows[0]["volume_ml"], rows[0]["projected_sodium_mmol_l"]) == ("warn", 651.2, 126.0)
    assert rows[1]["reason"] == (
        "target-sodium: 120 is the serum sodium already (120 mmol/L) (accepted: a target other than 120 mmol/L)"
    )
    assert err == f"osmodose: {orders} row 3: {rows[1]['reason']}\n"


def test_course_plan_takes_a_target_sodium(tmp_path: Path) -> None:
    episode = str(tmp_path / "ep.json")
    assert run("course", "new", episode, *MAN)[0] == 0
    assert run("course", "add-lab", episode, "--time", "2026-12-01T08:00Z", "--sodium", "120")[0] == 0
    plan = ("course", "plan", episode, "--agent", "nacl-3", "--target-sodium", "126", "--time", "2026-12-01T09:00Z")
    _code, out, _err = run(*plan, "--json")
    planned = json.loads(out)
    assert planned["check"]["dose"]["volume_ml"] == 651.2
    assert planned["projected_sodium_after_mmol_l"] == 126.0
