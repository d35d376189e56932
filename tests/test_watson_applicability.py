"""The Watson formula is refused where it cannot apply, in a check and in an audit row alike.

Watson PE, Watson ID, Batt RD. Am J Clin Nutr 1980;33:27-39 fitted the formula in
adults; outside the body sizes it was fitted on it can give any number, even a
negative total body water, which would turn every sodium projection into nonsense.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from osmodose.case.inputs import parse_check_request
from osmodose.check.run import run_check
from osmodose.cli.main import main
from osmodose.errors import InputError
from osmodose.formulary import Formulary

BASE = {"age": "55", "sex": "male", "sodium": "140", "tbw-method": "watson"}


def test_a_negative_watson_water_is_an_input_error_not_a_figure(demo: Formulary) -> None:
    # Man, 55 y, 25 cm, 0.3 kg (each inside its typing range): 2.447 - 0.09516 x 55 + 0.1074 x 25
    # + 0.3362 x 0.3 = -0.0009 L (Watson 1980 men's formula, arithmetic).
    request = parse_check_request({**BASE, "weight": "0.3", "height": "25"})
    with pytest.raises(InputError) as caught:
        run_check(request, demo)
    assert str(caught.value) == (
        "tbw-method: watson gives -0.0 L for 0.3 kg, -0% of body weight, outside 30%-80%: the formula does not "
        "fit this height, weight and age (accepted: fraction, or check height, weight and age)"
    )


def test_watson_is_for_adults_only(demo: Formulary) -> None:
    request = parse_check_request({**BASE, "age": "10", "weight": "30", "height": "140"})
    with pytest.raises(InputError) as caught:
        run_check(request, demo)
    assert (
        str(caught.value)
        == "tbw-method: watson is for adults only (age 10 is under 18) (accepted: fraction for a child)"
    )


def test_watson_for_the_published_check_man_still_works(demo: Formulary) -> None:
    # Man 35 y, 180 cm, 80 kg: 45.34 L (Watson 1980 formula, arithmetic), 57 % of weight.
    result = run_check(parse_check_request({**BASE, "age": "35", "weight": "80", "height": "180"}), demo)
    assert result.patient.total_body_water_l == pytest.approx(45.3444)


def test_an_audit_row_with_an_unusable_watson_water_gets_the_same_reason(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = tmp_path / "orders.csv"
    path.write_text(
        "weight,age,sex,sodium,height,tbw-method\n0.3,55,male,140,25,watson\n80,35,male,140,180,watson\n",
        encoding="utf-8",
    )
    code = main(["audit", str(path)])
    err = capsys.readouterr().err
    assert code == 1  # one row could not be audited
    assert err.splitlines() == [
        f"osmodose: {path} row 2: tbw-method: watson gives -0.0 L for 0.3 kg, -0% of body weight, outside 30%-80%: "
        "the formula does not fit this height, weight and age (accepted: fraction, or check height, weight and age)"
    ]
