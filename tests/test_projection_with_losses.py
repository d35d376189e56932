"""The projection with urine losses, its range, free water and equiosmolar doses, against their check values.

Every figure here is worked by hand from the published formula named beside it.
"""

from __future__ import annotations

import pytest

from osmodose.case.inputs import parse_check_request
from osmodose.check.results import CheckResult
from osmodose.check.run import run_check
from osmodose.errors import InputError
from osmodose.formulary import Formulary
from osmodose.science import formulas as f

MAN_70 = {"weight": "70", "age": "45", "sex": "male"}  # TBW 0.6 x 70 = 42 L (Adrogue HJ, Madias NE. NEJM 2000)
WOMAN_70 = {"weight": "70", "age": "45", "sex": "female"}  # TBW 0.5 x 70 = 35 L (same source)


def check(demo: Formulary, **fields: str) -> CheckResult:
    return run_check(parse_check_request({**MAN_70, **fields}), demo)


# --- the full mass balance (Barsoum NR, Levine BS. Nephrol Dial Transplant 2002;17:1176) ----------


@pytest.mark.parametrize(
    ("urine_l", "expected"),
    [
        # (110 x 42 + 1 x 513 - 1 x 100) / (42 + 1 - 1) = 5033 / 42 = 119.83 (the check value).
        (1.0, 5033 / 42),
        # (4620 + 513 - 200) / (42 + 1 - 2) = 4933 / 41 = 120.32.
        (2.0, 4933 / 41),
    ],
)
def test_full_balance_with_urine_out(urine_l: float, expected: float) -> None:
    projected = f.projected_sodium(110, 513, 42, 1.0, urine_l, 100)
    assert projected == pytest.approx(expected, rel=1e-12)
    assert round(projected, 2) == {1.0: 119.83, 2.0: 120.32}[urine_l]


def test_check_with_urine_reports_both_projections(demo: Formulary) -> None:
    # Demo 3 % saline is labelled 513 mmol/L: the balance gives 119.83 with 1 L of urine at Na 100, and the
    # infusate alone 110 + 403 / 43 = 119.37 (Adrogue-Madias at 1 L).
    result = check(demo, sodium="110", agent="nacl-3", volume="1L", **{"urine-volume": "1L", "urine-sodium": "100"})
    assert result.projected_sodium_mmol_l == pytest.approx(5033 / 42)
    assert result.projected_sodium_rise_mmol_l == pytest.approx(5033 / 42 - 110)
    assert result.projected_sodium_without_losses_mmol_l == pytest.approx(110 + 403 / 43)
    assert result.urine == {"volume_ml": 1000.0, "sodium_mmol_l": 100.0, "potassium_mmol_l": None}
    # 1 x (1 - 100 / 110) = 0.0909 L of electrolyte-free water.
    assert result.electrolyte_free_water_clearance_l == pytest.approx(1 - 100 / 110)


def test_target_rise_with_urine_solves_the_same_balance(demo: Formulary) -> None:
    # The check value: TBW 35, Na 120, +6, 1 L urine with Na + K 100, 3 % (513):
    # V = [6 (35 - 1) + 1 (100 - 120)] / (513 - 120 - 6) = 184 / 387 = 0.4755 L, against 6 x 35 / 387 = 0.5426 L
    # without urine.
    assert f.volume_for_sodium_change(120, 513, 35, 6, 1.0, 100) == pytest.approx(184 / 387)
    assert f.volume_for_sodium_change(120, 513, 35, 6) == pytest.approx(210 / 387)
    with_urine = run_check(
        parse_check_request(
            {**WOMAN_70, "sodium": "120", "agent": "nacl-3", "target-rise": "6", "urine-volume": "1000",
             "urine-sodium": "60", "urine-potassium": "40"}
        ),
        demo,
    )  # fmt: skip
    without = run_check(parse_check_request({**WOMAN_70, "sodium": "120", "agent": "nacl-3", "target-rise": "6"}), demo)
    assert with_urine.dose is not None and without.dose is not None
    assert with_urine.dose.volume_ml == pytest.approx(184 / 387 * 1000)  # 475 mL
    assert without.dose.volume_ml == pytest.approx(210 / 387 * 1000)  # 542 mL
    assert (int(with_urine.dose.volume_ml), int(without.dose.volume_ml)) == (475, 542)
    assert with_urine.projected_sodium_mmol_l == pytest.approx(126.0)


def test_urine_alone_past_the_target_cannot_be_reached(demo: Formulary) -> None:
    # 3 L of water-like urine (Na 10) from 35 L at 120: alone it takes sodium to (4200 - 30) / 32 = 130.3,
    # past a +6 target: no volume of 3 % gives +6.
    assert f.volume_for_sodium_change(120, 513, 35, 6, 3.0, 10) != f.volume_for_sodium_change(120, 513, 35, 6, 3.0, 10)
    with pytest.raises(InputError) as caught:
        run_check(
            parse_check_request(
                {**WOMAN_70, "sodium": "120", "agent": "nacl-3", "target-rise": "6", "urine-volume": "3L",
                 "urine-sodium": "10"}
            ),
            demo,
        )  # fmt: skip
    assert caught.value.field == "target-rise"


@pytest.mark.parametrize(
    ("fields", "message"),
    [
        (
            {"urine-sodium": "40"},
            "urine-sodium: 40 needs a urine volume (accepted: a urine volume with it, e.g. --urine-volume 800)",
        ),
        (
            {"urine-potassium": "30"},
            "urine-potassium: 30 needs a urine volume (accepted: a urine volume with it, e.g. --urine-volume 800)",
        ),
        (
            {"urine-volume": "800"},
            "urine-sodium: is required with a urine volume (accepted: the urine's sodium in mmol/L, "
            "e.g. --urine-sodium 40)",
        ),
        (
            {"urine-volume": "30L", "urine-sodium": "40"},
            "urine-volume: 30L is outside the plausible range (accepted: 0 to 20000 mL)",
        ),
        (
            # Half the low end of the range's TBW (42 - 3.76 = 38.24 L) is 19.12 L.
            {"urine-volume": "19.2L", "urine-sodium": "40"},
            "urine-volume: 19.2L is half the total body water or more (38.2 L at the low end of its range): "
            "not a urine output over one infusion (accepted: less than 19120 mL)",
        ),
    ],
)
def test_urine_input_errors_name_the_field(demo: Formulary, fields: dict[str, str], message: str) -> None:
    with pytest.raises(InputError) as caught:
        check(demo, sodium="120", agent="nacl-3", volume="250", **fields)
    assert str(caught.value) == message


def test_no_urine_potassium_is_taken_as_zero_and_said(demo: Formulary) -> None:
    given = {"urine-volume": "1L", "urine-sodium": "60"}
    without_k = check(demo, sodium="120", agent="nacl-3", volume="250", **given)
    zero_k = check(demo, sodium="120", agent="nacl-3", volume="250", **given, **{"urine-potassium": "0"})
    assert without_k.projected_sodium_mmol_l == zero_k.projected_sodium_mmol_l
    assert "No urine potassium given: taken as 0" in " ".join(without_k.notes)


# --- the range ---------------------------------------------------------------------------------


def test_range_spans_tbw_and_the_sodium_error(demo: Formulary) -> None:
    # 70 kg man, no height: TBW 42 +/- 3.76 L (Watson's standard error, men: Watson PE et al. Am J Clin Nutr
    # 1980) = 38.24 to 45.76 L; sodium 140 +/- 2 (common practice); 250 mL of 3 % (513).  Above 135 the rise
    # limits do not apply, so there is no widening.  Low: 138 + 0.25 x 375 / 46.01; high: 142 + 0.25 x 371 / 38.49.
    result = check(demo, sodium="140", agent="nacl-3", volume="250")
    low, high = result.projected_sodium_range_mmol_l or (0.0, 0.0)
    assert low == pytest.approx(138 + 0.25 * 375 / 46.01)
    assert high == pytest.approx(142 + 0.25 * 371 / 38.49)
    assert low < (result.projected_sodium_mmol_l or 0) < high


def test_range_spans_the_fraction_and_watson_where_height_is_known(demo: Formulary) -> None:
    # Man of 35, 180 cm, 80 kg: Watson 45.34 L (domain check value), fraction 0.6 x 80 = 48 L: TBW from
    # 45.34 - 3.76 to 48 + 3.76.  Sodium 140, 250 mL of 3 %.
    result = run_check(
        parse_check_request(
            {"weight": "80", "age": "35", "sex": "male", "height": "180", "sodium": "140", "agent": "nacl-3",
             "volume": "250"}
        ),
        demo,
    )  # fmt: skip
    watson = f.tbw_watson(35, 180, 80, True)
    assert watson == pytest.approx(45.34, abs=0.005)
    low, high = result.projected_sodium_range_mmol_l or (0.0, 0.0)
    assert low == pytest.approx(138 + 0.25 * 375 / (48 + 3.76 + 0.25))
    assert high == pytest.approx(142 + 0.25 * 371 / (watson - 3.76 + 0.25))
    assert "the fraction of weight and the Watson formula" in " ".join(result.notes)


def test_rising_side_widened_by_the_published_underprediction_in_hyponatraemia(demo: Formulary) -> None:
    # Na 120, +6 with 3 %: where the rise limits apply (below 135) the high end is at least 2.4 x the
    # predicted rise (those who overcorrected in Mohmand HK et al. Clin J Am Soc Nephrol 2007 rose 2.4 times
    # the Adrogue-Madias prediction): 120 + 14.4 = 134.4.
    result = check(demo, sodium="120", agent="nacl-3", **{"target-rise": "6"})
    assert (result.projected_sodium_range_mmol_l or (0.0, 0.0))[1] == pytest.approx(134.4)
    finding = next(x for x in result.findings if x.code == "rise-range-high")
    assert (finding.severity, finding.value, finding.limit) == ("warn", pytest.approx(14.4), 10.0)
    assert finding.message == (
        "the high end of the projected rise, 14.4 mmol/L, is above the refuse limit of 10 mmol/L: measured rises "
        "often outrun the projection (Mohmand 2007); re-measure sodium early"
    )
    assert not any(x.code == "sodium-rise-24h" for x in result.findings)  # the point, +6, is within the limits


def test_range_high_past_the_limit_is_not_repeated_when_the_point_is_refused(demo: Formulary) -> None:
    # 1.5 L of 3 % at 110: +13.9 > 10 is refused by sodium-rise-24h; the range adds no second finding.
    result = check(demo, sodium="110", agent="nacl-3", volume="1500")
    codes = [x.code for x in result.findings]
    assert "sodium-rise-24h" in codes and "rise-range-high" not in codes


def test_no_range_for_mannitol(demo: Formulary) -> None:
    result = check(demo, sodium="140", agent="mannitol-20", dose="1g/kg")
    assert result.projected_sodium_range_mmol_l is None


# --- dilute urine pushing the rise past a limit (aquaresis) -------------------------------------


def test_dilute_urine_pushing_the_rise_past_the_warn_limit_is_warned(demo: Formulary) -> None:
    # Na 120, 500 mL of 3 % (513): alone +0.5 x 393 / 42.5 = +4.62; with 2 L of urine at Na + K 40:
    # [0.5 x 393 - 2 x (40 - 120)] / (42 + 0.5 - 2) = 356.5 / 40.5 = +8.80 > 8 (Verbalis 2013).
    result = check(
        demo, sodium="120", agent="nacl-3", volume="500", **{"urine-volume": "2L", "urine-sodium": "25",
                                                             "urine-potassium": "15"}
    )  # fmt: skip
    assert result.projected_sodium_rise_mmol_l == pytest.approx(356.5 / 40.5)
    found = {x.code: x for x in result.findings}
    assert found["sodium-rise-24h"].severity == "warn"
    aquaresis = found["aquaresis-rise"]
    assert (aquaresis.severity, aquaresis.limit) == ("warn", 8.0)
    assert aquaresis.message == (
        "urine more dilute than serum (Na + K below the serum sodium: aquaresis) takes the projected rise to "
        "8.8 mmol/L, past the limit of 8 mmol/L that the order alone stays within: watch the urine output and "
        "re-measure sodium early"
    )


def test_dilute_urine_pushing_the_rise_past_the_refuse_limit_is_named_with_that_limit(demo: Formulary) -> None:
    # Na 120, 1 L of 3 %: alone +393 / 43 = +9.14 (past 8, within 10); with 1 L of urine at Na + K 40:
    # (393 + 80) / 42 = +11.26 > 10: sodium-rise-24h refuses, and the urine is named as what crossed 10.
    result = check(demo, sodium="120", agent="nacl-3", volume="1L", **{"urine-volume": "1L", "urine-sodium": "40"})
    assert result.projected_sodium_rise_mmol_l == pytest.approx(473 / 42)
    found = {x.code: x for x in result.findings}
    assert found["sodium-rise-24h"].severity == "refuse"
    assert (found["aquaresis-rise"].severity, found["aquaresis-rise"].limit) == ("warn", 10.0)


def test_urine_richer_than_serum_never_warns_of_aquaresis(demo: Formulary) -> None:
    # Urine Na + K 200 above serum 120 takes sodium out: 0.5 x 393 - 2 x 80 = 36.5 / 40.5 = +0.90.
    result = check(demo, sodium="120", agent="nacl-3", volume="500", **{"urine-volume": "2L", "urine-sodium": "200"})
    assert result.projected_sodium_rise_mmol_l == pytest.approx(36.5 / 40.5)
    assert "aquaresis-rise" not in {x.code for x in result.findings}


# --- free-water deficit ------------------------------------------------------------------------


def test_free_water_deficit_check_value(demo: Formulary) -> None:
    # 68 kg man of 76 (TBW 0.5 x 68 = 34 L), Na 168: 34 x (168/140 - 1) = 6.8 L (secondary sources; the
    # example of Adrogue HJ, Madias NE. N Engl J Med 2000;342:1493-9, from memory).
    result = run_check(parse_check_request({"weight": "68", "age": "76", "sex": "male", "sodium": "168"}), demo)
    assert result.free_water_deficit_l == pytest.approx(6.8)
    # 5 % glucose (no sodium) to lower by the daily limit of 10: V = -10 x 34 / (0 - 168 + 10) = 2.152 L.
    volumes = {v.agent: v.volume_ml for v in result.volumes_for_daily_fall}
    assert volumes["glucose-5"] == pytest.approx(340 / 158 * 1000)
    # 0.9 % saline (154) can: -340 / (154 - 168 + 10) = 85 L; lactated Ringer's (130 + 4): 340 / 24 = 14.2 L.
    assert volumes["nacl-0.9"] == pytest.approx(85_000, rel=1e-3)
    assert volumes["lactated-ringers"] == pytest.approx(340 / 24 * 1000)
    assert set(volumes) == {"glucose-5", "nacl-0.9", "lactated-ringers"}  # the fluids below serum sodium


def test_no_free_water_deficit_at_145_or_below(demo: Formulary) -> None:
    # Hypernatraemia is above 145 (Adrogue & Madias 2000, from memory): null at 145, not 0.
    result = check(demo, sodium="145")
    assert (result.free_water_deficit_l, result.volumes_for_daily_fall) == (None, [])


def test_electrolyte_free_water_clearance_check_value() -> None:
    # 2 L/day, U_Na 50, U_K 30, P_Na 120: 2 x (1 - 80/120) = 0.667 L/day (secondary sources).
    assert f.electrolyte_free_water_clearance(2.0, 50, 30, 120) == pytest.approx(2 / 3)
    assert round(f.electrolyte_free_water_clearance(2.0, 50, 30, 120), 3) == 0.667


# --- equiosmolar doses -------------------------------------------------------------------------


def test_equiosmolar_check_values(demo: Formulary) -> None:
    # 231 mL of 20 % mannitol: 200 g/L / 182.17 g/mol = 1097.9 mOsm/L x 0.231 = 253.6 mOsm (Francony G et al.
    # Crit Care Med 2008 compared it with 100 mL of 7.45 % saline at 255 mOsm).  23.4 % saline: 234 / 58.44 x 2
    # = 8008 mOsm/L -> 31.7 mL; 3 % labelled 1027 mOsm/L -> 247 mL.
    result = check(demo, sodium="140", glucose="5", urea="5", osmolality="290", agent="mannitol-20", volume="231")
    assert result.dose is not None
    assert result.dose.osmoles_mosm == pytest.approx(253.6, abs=0.05)
    volumes = {v.agent: v.volume_ml for v in result.equiosmolar or []}
    assert round(volumes["nacl-23.4"] or 0, 1) == 31.7
    assert round(volumes["nacl-3"] or 0) == 247
    # 7.45 % saline at 255 mOsm per 100 mL is 7.5 % at 2566 mOsm/L: 253.6 / 2.566 = 98.8 mL.
    assert volumes["nacl-7.5"] == pytest.approx(253.6 / (75 / 58.44 * 2), rel=1e-3)
    # Isotonic saline, 5 % glucose and a mixed fluid are not osmotherapy agents; the order's own agent is left out.
    assert set(volumes) == {"nacl-3", "nacl-7.5", "nacl-23.4", "bicarb-8.4"}
    assert any("about 7 % lower" in note for note in result.notes)


def test_francony_saline_is_equiosmolar_with_231_ml_of_mannitol() -> None:
    # 100 mL of 7.45 % saline: 74.5 / 58.44 x 2 x 0.1 = 255.0 mOsm (Francony G et al. Crit Care Med 2008).
    assert f.amount_in_volume(100, 74.5 / 58.44 * 2 * 1000) == pytest.approx(255.0, abs=0.05)


def test_no_equiosmolar_list_without_an_order_or_for_a_non_osmotherapy_agent(demo: Formulary) -> None:
    assert check(demo, sodium="140").equiosmolar is None
    assert check(demo, sodium="150", agent="glucose-5", volume="500").equiosmolar == []


# --- the apparent total body water -------------------------------------------------------------


def test_apparent_tbw_check_value() -> None:
    # 70 kg man (TBW 42), Na 120, 500 mL of 3 % (513.3), then 128: 0.5 x (513.3 - 128) / 8 = 24.1 L.
    assert f.apparent_tbw(120, 128, 0.5 * 513.3, 0.5) == pytest.approx(0.5 * (513.3 - 128) / 8)
    assert round(f.apparent_tbw(120, 128, 0.5 * 513.3, 0.5), 1) == 24.1


def test_apparent_tbw_with_urine_inverts_the_full_balance() -> None:
    # The balance of 119.83 (42 L, 1 L of 513 in, 1 L of Na + K 100 out, from 110) solved back for TBW.
    after = f.projected_sodium(110, 513, 42, 1.0, 1.0, 100)
    assert f.apparent_tbw(110, after, 513.0, 1.0, 100.0, 1.0) == pytest.approx(42.0, rel=1e-12)
