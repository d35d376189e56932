"""Discrepancies between an order as written and its recomputation, with the numbers worked by hand.

Concentrations: mannitol 20 % w/v = 200 g/L; NaCl 23.4 % = 234 g/L / 58.44 g/mol
= 4004 mmol/L Na (product labels: 4 mEq/mL); NaCl 3 % = 513 mmol/L (product labels).
Demo formulary limits are invented demo values (formularies/demo-unit.toml).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from osmodose.errors import InputError
from osmodose.formulary import load_formulary
from tests.verify_helpers import MAN_70, codes, discrepancy, verify


def test_tenfold_mannitol_volume_is_refused(demo) -> None:
    # "Mannitol 20 % for 1 g/kg" in 70 kg: 70 g / 200 g/L = 350 mL.  Written 3500 mL
    # (a slipped zero): 3.5 L x 200 g/L = 700 g = 10 g/kg, 10 times the stated dose.
    record = verify(demo, agent="mannitol-20", volume="3500", duration="20", stated_dose="1g/kg")
    d = discrepancy(record, "stated-dose-mismatch")
    assert d.severity == "refuse"
    assert d.stated == 1.0
    assert d.recomputed == pytest.approx(10.0)
    assert d.message == (
        "stated dose 1 g/kg, but 3500 mL of mannitol-20 is 10 g/kg for 70 kg (10 times the stated dose); "
        "1 g/kg is 350 mL; the volume fits 1 g/kg for a weight of 700 kg"
    )
    # 10 g/kg is also above the demo refuse limit of 1.5 g/kg.
    assert codes(record)["dose-per-kg"] == "refuse"
    assert record.outcome == "refused"


def test_mannitol_one_gram_per_kg_as_written_has_no_dose_discrepancy(demo) -> None:
    # 350 mL x 200 g/L = 70 g = 1.0 g/kg for 70 kg: as stated.  350 mL is not a whole
    # number of the demo's 250 or 500 mL bags, which is a warning only.
    record = verify(demo, agent="mannitol-20", volume="350", duration="20", line="central", stated_dose="1g/kg")
    assert codes(record) == {"volume-not-a-presentation": "warn"}
    assert discrepancy(record, "volume-not-a-presentation").message == (
        "350 mL is not a whole number of the unit's mannitol-20 stock (250 mL, 500 mL)"
    )
    assert record.outcome == "held"
    assert record.result.dose is not None
    assert record.result.dose.solute_g == pytest.approx(70.0)


def test_absolute_stated_dose_is_compared_in_grams(demo) -> None:
    # "70 g" stated, 350 mL x 200 g/L = 70 g: agrees.  "50 g" stated: 70 / 50 = 1.4 times, warn.
    agrees = verify(demo, agent="mannitol-20", volume="350", stated_dose="70g")
    assert "stated-dose-mismatch" not in codes(agrees)
    off = verify(demo, agent="mannitol-20", volume="350", stated_dose="50g")
    assert discrepancy(off, "stated-dose-mismatch").severity == "warn"
    assert discrepancy(off, "stated-dose-mismatch").recomputed == pytest.approx(70.0)


def test_per_kg_dose_stated_for_the_wrong_weight_is_warned(demo) -> None:
    # The prescriber took 80 kg for a 50 kg woman: 0.5 g/kg x 80 kg = 40 g = 200 mL of 20 %.
    # For 50 kg that is 40 g / 50 kg = 0.8 g/kg, 1.6 times the stated dose: beyond 10 %, under 2-fold.
    woman = {"weight": "50", "age": "40", "sex": "female", "sodium": "140"}
    record = verify(demo, patient=woman, agent="mannitol-20", volume="200", duration="20", stated_dose="0.5 g/kg")
    d = discrepancy(record, "stated-dose-mismatch")
    assert d.severity == "warn"
    assert d.recomputed == pytest.approx(0.8)
    assert d.message == (
        "stated dose 0.5 g/kg, but 200 mL of mannitol-20 is 0.8 g/kg for 50 kg (1.6 times the stated dose); "
        "0.5 g/kg is 125 mL; the volume fits 0.5 g/kg for a weight of 80 kg"
    )


def test_weight_in_pounds_taken_for_kg_is_refused(demo) -> None:
    # 70 kg = 154 lb.  1 g/kg x "154 kg" = 154 g = 770 mL of 20 %.  For 70 kg: 154 / 70 = 2.2 g/kg,
    # 2.2 times the stated dose: at least 2-fold, so refused whatever the tolerance.
    record = verify(demo, agent="mannitol-20", volume="770", duration="30", stated_dose="1g/kg")
    d = discrepancy(record, "stated-dose-mismatch")
    assert d.severity == "refuse"
    assert d.recomputed == pytest.approx(2.2)
    assert record.outcome == "refused"


def test_underdose_by_tenfold_is_refused_too(demo) -> None:
    # 35 mL x 200 g/L = 7 g = 0.1 g/kg for a stated 1 g/kg: a tenth of the dose.
    record = verify(demo, agent="mannitol-20", volume="35", stated_dose="1g/kg")
    assert discrepancy(record, "stated-dose-mismatch").severity == "refuse"


@pytest.mark.parametrize(
    ("volume", "flagged"),
    [
        # 385 mL x 200 g/L = 77 g = 1.1 g/kg: exactly 10 % over, within the default tolerance (common practice).
        ("385", False),
        # 386 mL = 77.2 g = 1.103 g/kg: 10.3 % over, beyond it.
        ("386", True),
        # 315 mL = 63 g = 0.9 g/kg: exactly 10 % under.
        ("315", False),
    ],
)
def test_dose_tolerance_boundary_is_ten_percent(demo, volume: str, flagged: bool) -> None:
    record = verify(demo, agent="mannitol-20", volume=volume, stated_dose="1g/kg")
    assert ("stated-dose-mismatch" in codes(record)) is flagged


def test_formulary_dose_tolerance_overrides_the_default(demo, tmp_path) -> None:
    # With dose_tolerance = "5 %", 385 mL (1.1 g/kg, 10 % over) is a warn.
    text = Path(demo.path).read_text(encoding="utf-8")
    text = text.replace(
        'osmolality_refuse = "320 mOsm/kg"', 'osmolality_refuse = "320 mOsm/kg"\ndose_tolerance = "5 %"'
    )
    path = tmp_path / "unit.toml"
    path.write_text(text, encoding="utf-8")
    unit = load_formulary(path)
    assert unit.limits.get("dose_tolerance") == 5.0
    record = verify(unit, agent="mannitol-20", volume="385", stated_dose="1g/kg")
    assert discrepancy(record, "stated-dose-mismatch").severity == "warn"


def test_central_only_agent_ordered_peripheral_is_refused(demo) -> None:
    # 23.4 % saline is central only in the demo formulary (and by common practice).
    # 30 mL over 15 min = 30 mL / 0.25 h = 120 mL/h, under the demo maximum of 180 mL/h.
    record = verify(demo, agent="nacl-23.4", volume="30", duration="15", line="peripheral")
    assert codes(record) == {"central-line-only": "refuse"}
    assert record.outcome == "refused"
    central = verify(demo, agent="nacl-23.4", volume="30", duration="15", line="central")
    assert codes(central) == {}
    assert central.outcome == "released"
    # 30 mL x 4004 mmol/L = 120.1 mmol Na; projected 141 + 0.03 x (4004 - 141) / (42 + 0.03) = 143.76.
    assert central.result.projected_sodium_mmol_l == pytest.approx(143.76, abs=0.01)


def test_central_only_agent_with_no_line_named_is_held_and_cannot_be_accepted(demo) -> None:
    record = verify(demo, agent="nacl-23.4", volume="30", duration="15")
    assert codes(record) == {"line-not-stated": "warn"}
    found = discrepancy(record, "line-not-stated")
    assert found.message == "nacl-23.4 is for a central line only and the order names no line: state the line"
    assert found.acceptable is False
    accepted = verify(demo, agent="nacl-23.4", volume="30", duration="15", accept={"line-not-stated": "line in place"})
    assert accepted.decision.outcome == "held"
    [attempt] = accepted.decision.not_accepted
    assert attempt.why == "the order must state it: leaving it out cannot be accepted"


def test_agent_above_the_peripheral_limit_with_no_line_named_is_warned(demo) -> None:
    # Mannitol 20 %: 200 g/L / 182.17 g/mol = 1098 mOsm/L, above the demo's peripheral limit of 900.
    record = verify(demo, agent="mannitol-20", volume="250", duration="20")
    assert codes(record) == {"line-not-stated": "warn"}
    assert discrepancy(record, "line-not-stated").message == (
        "mannitol-20 (1098 mOsm/L) is above the peripheral-line limit of 900 mOsm/L and the order names no line"
    )
    # Either line is allowed for it, and the worst a peripheral line gives is a warning: this one may be accepted.
    assert discrepancy(record, "line-not-stated").acceptable is True
    # 0.9 % saline (308 mOsm/L) needs no line named.
    saline = verify(demo, agent="nacl-0.9", volume="1000", duration="60")
    assert codes(saline) == {}


def test_rate_too_fast_from_the_duration_is_refused(demo) -> None:
    # 23.4 % 30 mL over 5 min = 30 mL / (5/60 h) = 360 mL/h, above the demo maximum of 180 mL/h.
    record = verify(demo, agent="nacl-23.4", volume="30", duration="5", line="central")
    assert codes(record) == {"rate-too-fast": "refuse"}
    assert record.result.dose is not None
    assert record.result.dose.rate_ml_h == pytest.approx(360.0)


def test_rate_too_fast_as_written_is_refused(demo) -> None:
    # Written as a rate: 360 mL/h for 30 mL is 5 min.
    record = verify(demo, agent="nacl-23.4", volume="30", rate="360", line="central")
    assert codes(record) == {"rate-too-fast": "refuse"}
    # 6 mL/min = 360 mL/h: the unit is read.
    again = verify(demo, agent="nacl-23.4", volume="30", rate="6 mL/min", line="central")
    assert codes(again) == {"rate-too-fast": "refuse"}


def test_rate_and_duration_that_disagree_check_the_faster(demo) -> None:
    # Written "30 mL over 15 min at 360 mL/h": 15 min gives 120 mL/h, a third of 360: refused as
    # self-contradicting, and the faster rate (360 mL/h) is the one judged against 180 mL/h.
    record = verify(demo, agent="nacl-23.4", volume="30", duration="15", rate="360", line="central")
    assert codes(record) == {"rate-too-fast": "refuse", "stated-rate-mismatch": "refuse"}
    assert discrepancy(record, "stated-rate-mismatch").message == (
        "stated rate 360 mL/h, but 30 mL over 15 min is 120 mL/h; the faster is checked against the agent's maximum"
    )
    # 120 mL/h against a written 130 mL/h: 120 / 130 = 0.92, within 10 %.
    close = verify(demo, agent="nacl-23.4", volume="30", duration="15", rate="130", line="central")
    assert codes(close) == {}
    # Against 100 mL/h: 1.2 times, beyond 10 %, a warn.
    loose = verify(demo, agent="nacl-23.4", volume="30", duration="15", rate="100", line="central")
    assert codes(loose) == {"stated-rate-mismatch": "warn"}


def test_agent_with_a_maximum_rate_and_no_duration_is_warned(demo) -> None:
    record = verify(demo, agent="nacl-23.4", volume="30", line="central")
    assert codes(record) == {"duration-not-stated": "warn"}


# Stated expected sodium: 100 kg man, TBW 0.6 x 100 = 60 L, Na 120, 500 mL of 3 % (513 mmol/L):
# projected 120 + 0.5 x (513 - 120) / (60 + 0.5) = 120 + 196.5 / 60.5 = 123.25 mmol/L (+3.25)
# (mass balance: Chen S et al. Kidney360 2021). 500 mL / 100 kg = 5 mL/kg, not above the demo warn of 5.
MAN_100 = {"weight": "100", "age": "50", "sex": "male", "sodium": "120"}


@pytest.mark.parametrize(
    ("stated", "severity"),
    [
        ("123", None),  # 0.25 apart: within 2 mmol/L (common practice)
        ("122", None),  # +2 stated vs +3.25: 1.25 apart, within 2 mmol/L
        ("126", "warn"),  # +6 stated vs +3.25: 2.75 apart; 3.25 / 6 = 0.54, not 2-fold
        ("128", "refuse"),  # +8 stated vs +3.25: 3.25 / 8 = 0.41, 2-fold or more
        ("118", "refuse"),  # a fall stated, a rise projected
    ],
)
def test_stated_expected_sodium_against_the_projection(demo, stated: str, severity: str | None) -> None:
    record = verify(demo, patient=MAN_100, agent="nacl-3", volume="500", duration="60", stated_sodium=stated)
    assert record.result.projected_sodium_mmol_l == pytest.approx(123.248, abs=0.001)
    assert codes(record).get("stated-sodium-mismatch") == severity


def test_stated_sodium_message(demo) -> None:
    record = verify(demo, patient=MAN_100, agent="nacl-3", volume="500", duration="60", stated_sodium="126")
    assert discrepancy(record, "stated-sodium-mismatch").message == (
        "stated expected sodium 126 mmol/L (+6.0), but the projection is 123.2 mmol/L (+3.2): "
        "2.8 mmol/L apart, beyond the tolerance of 2 mmol/L"
    )


def test_stated_sodium_for_mannitol_is_an_input_error(demo) -> None:
    with pytest.raises(InputError) as caught:
        verify(demo, agent="mannitol-20", volume="350", stated_sodium="140")
    assert str(caught.value) == (
        "stated-sodium: 140 cannot be checked: osmodose projects no sodium for mannitol-20 "
        "(accepted: leave it out for this agent)"
    )


def test_stated_dose_in_grams_of_a_mixed_fluid_is_an_input_error(demo) -> None:
    with pytest.raises(InputError) as caught:
        verify(demo, agent="lactated-ringers", volume="1000", stated_dose="10 g")
    assert str(caught.value) == (
        "stated-dose: 10 g is in grams, but lactated-ringers is a mixed fluid (accepted: mL, mmol or mOsm)"
    )


def test_stated_sodium_dose_in_mmol_for_mannitol_is_an_input_error(demo) -> None:
    with pytest.raises(InputError) as caught:
        verify(demo, agent="mannitol-20", volume="350", stated_dose="20 mmol")
    assert str(caught.value) == (
        "stated-dose: 20 mmol is in mmol of sodium, but mannitol-20 has no sodium (accepted: g, mL or mOsm)"
    )


def test_stated_sodium_dose_per_kg(demo) -> None:
    # 250 mL of 3 % = 0.25 L x 513 mmol/L = 128.3 mmol Na = 1.83 mmol/kg for 70 kg; stated 2 mmol/kg:
    # 1.83 / 2 = 0.92, within 10 %.
    record = verify(demo, patient=MAN_70, agent="nacl-3", volume="250", duration="15", stated_dose="2 mmol/kg")
    assert "stated-dose-mismatch" not in codes(record)
