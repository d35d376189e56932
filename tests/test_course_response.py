"""A course learning from the patient: urine outputs, the apparent TBW, the ICP response per dose, the rescue.

Patients and episodes are invented (tests/course_build.py); each figure is worked by hand from the balance
named beside it.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from osmodose.cli.main import main
from osmodose.course.apparent_tbw import apparent_tbw, apparent_tbw_findings
from osmodose.course.entries import parse_output
from osmodose.course.episode import OutputEntry
from osmodose.course.icp_response import icp_responses, response_text
from osmodose.course.plan import plan_dose
from osmodose.course.projection import episode_tbw_l, project_now
from osmodose.course.report import review, review_json
from osmodose.course.series import course_series
from osmodose.course.timeline import build_timeline
from osmodose.errors import InputError
from osmodose.formulary import Formulary
from tests.course_build import at, dose, episode, formulary_with_limits, lab, reading


def output(hours: float, volume_ml: float, sodium: float | None = None, potassium: float | None = None,
           over_min: float | None = None) -> OutputEntry:  # fmt: skip
    return OutputEntry(
        time=at(hours), volume_ml=volume_ml, sodium_mmol_l=sodium, potassium_mmol_l=potassium, over_min=over_min
    )


# --- urine outputs in the projection -----------------------------------------------------------


def test_an_output_with_its_sodium_is_taken_out_by_the_full_balance(demo: Formulary) -> None:
    # 70 kg man (42 L), lab 120, 1 L of urine at Na + K 60 + 40 over the 2 h after it:
    # 120 + [0 - 1 x (100 - 120)] / (42 - 1) = 120 + 20 / 41 = 120.488 (Barsoum & Levine 2002).
    ep = episode(labs=[lab(0, 120)]).with_entry(output(2, 1000, 60, 40, 120))
    projection = project_now(ep, build_timeline(ep, demo), 42.0, at(3))
    assert projection is not None
    assert projection.sodium_now == pytest.approx(120 + 20 / 41)
    assert "The projection takes out 1000 mL of urine recorded with its sodium since the latest lab." in (
        projection.notes
    )


def test_an_output_over_a_period_counts_for_its_share_since_the_lab(demo: Formulary) -> None:
    # 1 L over 4 h ending 2 h after the lab: half of it was passed since the lab.
    ep = episode(labs=[lab(0, 120)]).with_entry(output(2, 1000, 60, 40, 240))
    projection = project_now(ep, build_timeline(ep, demo), 42.0, at(3))
    assert projection is not None
    assert projection.sodium_now == pytest.approx(120 + 0.5 * 20 / 41.5)


def test_an_output_without_its_sodium_stays_out_of_the_balance_and_is_said(demo: Formulary) -> None:
    ep = episode(labs=[lab(0, 120)], doses=[dose(1, "nacl-3", 100)]).with_entry(output(2, 1000))
    projection = project_now(ep, build_timeline(ep, demo), 42.0, at(3))
    assert projection is not None
    assert projection.sodium_now == pytest.approx(120 + 0.1 * 393 / 42.1)  # the dose alone
    assert any("1 urine output without a urine sodium" in note for note in projection.notes)


def test_add_output_from_the_command_line(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    path = tmp_path / "ep.json"
    assert main(["course", "new", str(path), "--weight", "70", "--age", "45", "--sex", "male"]) == 0
    code = main(
        ["course", "add-output", str(path), "--time", "2026-12-01T10:00Z", "--volume", "1.2L", "--sodium", "40",
         "--over", "4h"]
    )  # fmt: skip
    assert code == 0
    assert capsys.readouterr().out.endswith("(1 output in all)\n")
    stored = json.loads(path.read_text(encoding="utf-8"))["outputs"]
    assert stored == [
        {"id": "U1", "time": "2026-12-01T10:00:00Z", "corrections": [], "volume_ml": 1200.0, "sodium_mmol_l": 40.0,
         "potassium_mmol_l": None, "over_min": 240.0}
    ]  # fmt: skip


@pytest.mark.parametrize(
    ("fields", "message"),
    [
        ({"time": "now"}, "urine-volume: is required"),
        (
            {"time": "now", "urine-volume": "-5"},
            "urine-volume: -5 is outside the plausible range (accepted: 0 to 20000 mL)",
        ),
        (
            {"time": "now", "urine-volume": "500", "over": "0"},
            "over: 0 is outside the plausible range (accepted: 1 to 10080 min)",
        ),
    ],
)
def test_output_input_errors(fields: dict[str, str], message: str) -> None:
    with pytest.raises(InputError) as caught:
        parse_output(fields)
    assert str(caught.value) == message


# --- the apparent total body water -------------------------------------------------------------


def test_apparent_tbw_of_a_dose_check_value(demo: Formulary) -> None:
    # 70 kg man (TBW 42), sodium 120, 500 mL of 3 % (label 513), then 128: 0.5 x (513 - 128) / 8 = 24.06 L
    # (24.1 with 513.3 mmol/L: the balance solved for TBW), 57 % of 42 L: below 60 %, warned.
    ep = episode(labs=[lab(0, 120), lab(6, 128)], doses=[dose(1, "nacl-3", 500, 30)])
    timeline = build_timeline(ep, demo)
    result = apparent_tbw(timeline, 42.0, demo.limits)
    assert result.combined_l == pytest.approx(0.5 * (513 - 128) / 8)
    assert round(result.combined_l or 0, 1) == 24.1
    assert result.for_dose(0) == result.combined_l
    [finding] = apparent_tbw_findings(result, timeline, demo.limits)
    assert (finding.code, finding.severity, finding.limit) == ("apparent-tbw-low", "warn", 60.0)
    assert finding.value == pytest.approx(100 * 24.0625 / 42)
    assert finding.message == (
        "sodium 120.0 at 2026-12-01T08:00+00:00 to 128.0 at 2026-12-01T14:00+00:00 after nacl-3 500 mL implies a "
        "total body water of 24.1 L, 57 % of the estimated 42.0 L, below the warn limit of 60 %: a response much "
        "larger than predicted (aquaresis likely); re-measure sodium early and watch the urine output"
    )


def test_a_response_as_predicted_is_not_flagged(demo: Formulary) -> None:
    # The sodium the engine projects for 500 mL (120 + 0.5 x 393 / 42.5 = 124.62) gives back 42 L: 100 %.
    after = 120 + 0.5 * 393 / 42.5
    ep = episode(labs=[lab(0, 120), lab(6, after)], doses=[dose(1, "nacl-3", 500, 30)])
    timeline = build_timeline(ep, demo)
    result = apparent_tbw(timeline, 42.0, demo.limits)
    assert result.combined_l == pytest.approx(42.0)
    assert apparent_tbw_findings(result, timeline, demo.limits) == []


def test_urine_recorded_with_its_sodium_enters_the_apparent_tbw(demo: Formulary) -> None:
    # The 128 is explained by 1.5 L of dilute urine (Na + K 50) with a TBW of 42 L:
    # after = [120 x 42 + 0.5 x 513 - 1.5 x 50] / (42 + 0.5 - 1.5); the balance solved back gives 42 L.
    after = (120 * 42 + 0.5 * 513 - 1.5 * 50) / 41
    ep = episode(labs=[lab(0, 120), lab(6, after)], doses=[dose(1, "nacl-3", 500, 30)]).with_entry(
        output(6, 1500, 30, 20, 360)
    )
    result = apparent_tbw(build_timeline(ep, demo), 42.0, demo.limits)
    assert result.combined_l == pytest.approx(42.0)
    assert result.intervals[0].urine_out_ml == pytest.approx(1500)


@pytest.mark.parametrize(
    ("doses", "after", "reason"),
    [
        ([dose(1, "mannitol-20", 350, 20), dose(2, "nacl-3", 250, 20)], 128, "mannitol given between the labs"),
        ([dose(5.9, "nacl-3", 250, 60)], 128, "a dose was still running at the second lab"),
        ([dose(1, "nacl-3", 250, 20)], 121.5, "sodium moved +1.5 mmol/L, within the measurement error of +/-2"),
        ([dose(1, "nacl-3", 250, 20)], 116, "sodium moved against what the balance predicts"),
    ],
)
def test_an_interval_the_balance_cannot_use_says_why(demo: Formulary, doses: list, after: float, reason: str) -> None:
    ep = episode(labs=[lab(0, 120), lab(6, after)], doses=doses)
    result = apparent_tbw(build_timeline(ep, demo), 42.0, demo.limits)
    assert result.combined_l is None
    assert (result.intervals[0].reason or "").startswith(reason)


def test_combined_apparent_tbw_weights_each_interval_by_its_sodium_change(demo: Formulary) -> None:
    # Interval 1: 120 -> 128 after 500 mL (24.06 L, change 8); interval 2: 128 -> 131 after 250 mL
    # (0.25 x (513 - 131) / 3 = 31.83 L, change 3): (24.06 x 8 + 31.83 x 3) / 11.
    ep = episode(
        labs=[lab(0, 120), lab(6, 128), lab(12, 131)], doses=[dose(1, "nacl-3", 500, 30), dose(7, "nacl-3", 250, 30)]
    )
    result = apparent_tbw(build_timeline(ep, demo), 42.0, demo.limits)
    first, second = 0.5 * (513 - 128) / 8, 0.25 * (513 - 131) / 3
    assert result.combined_l == pytest.approx((first * 8 + second * 3) / 11)
    assert [x.apparent_tbw_l for x in result.intervals] == pytest.approx([first, second])


def test_plan_judges_the_worse_of_the_estimated_and_the_apparent_tbw(demo: Formulary) -> None:
    # After 120 -> 128 (apparent TBW 24.06 L), 250 mL more of 3 % at 14:00: with 42 L
    # 128 + 0.25 x 385 / 42.25 = 130.28; with 24.06 L 128 + 96.25 / 24.31 = 131.96 (worse: judged).
    ep = episode(labs=[lab(0, 120), lab(6, 128)], doses=[dose(1, "nacl-3", 500, 30)])
    plan = plan_dose(ep, demo, {"agent": "nacl-3", "volume": "250", "time": at(6.5).isoformat()})
    by_basis = {v.basis: v.check.projected_sodium_mmol_l for v in plan.variants}
    assert by_basis["estimated"] == pytest.approx(128 + 0.25 * 385 / 42.25)
    assert by_basis["apparent"] == pytest.approx(128 + 96.25 / (24.0625 + 0.25))
    assert plan.judged_on == "apparent" and plan.sodium_after == by_basis["apparent"]
    assert plan.check.patient.tbw_method == "apparent"
    assert "apparent-tbw-low" in {x.code for x in plan.findings}


def test_plan_of_a_target_change_judges_the_estimates_volume_with_the_apparent_tbw(demo: Formulary) -> None:
    # +4 from 128 with 42 L: V = 4 x 42 / (513 - 128 - 4) = 0.441 L.  Given to a patient whose apparent TBW
    # is 24.06 L it gives 128 + 0.441 x 385 / (24.06 + 0.441) = 134.93, which is judged; with 24.06 L the +4
    # takes 4 x 24.06 / 381 = 0.253 L.
    ep = episode(labs=[lab(0, 120), lab(6, 128)], doses=[dose(1, "nacl-3", 500, 30)])
    plan = plan_dose(ep, demo, {"agent": "nacl-3", "target-rise": "4", "time": at(6.5).isoformat()})
    volume = 4 * 42 / 381
    assert plan.variants[0].check.dose is not None
    assert plan.variants[0].check.dose.volume_ml == pytest.approx(volume * 1000)
    assert plan.sodium_after == pytest.approx(128 + volume * 385 / (24.0625 + volume))
    assert any(
        f"takes about {4 * 24.0625 / 381 * 1000:.0f} mL instead of {volume * 1000:.0f} mL" in n for n in plan.notes
    )


# --- the ICP response per dose -----------------------------------------------------------------


def test_icp_response_before_lowest_after_and_time_below_the_threshold(demo: Formulary) -> None:
    # Dose at 1 h; ICP 30 at 0.5 h (within 1 h before), 18 at 1.5 h, 16 at 2.5 h (the lowest within 2 h),
    # 20 at 3.5 h, 25 at 4.5 h (above 22 again): at or below 22 from 1.5 h to 4.5 h = 3.0 h.
    readings = [reading(h, 85, icp) for h, icp in ((0.5, 30), (1.5, 18), (2.5, 16), (3.5, 20), (4.5, 25))]
    ep = episode(labs=[lab(0, 140)], doses=[dose(1, "mannitol-20", 350, 20)], readings=readings)
    [response] = icp_responses(build_timeline(ep, demo), demo.limits)
    assert (response.before_mmhg, response.lowest_mmhg, response.fall_mmhg) == (30.0, 16.0, 14.0)
    assert (response.below_h, response.below_at_least) == (3.0, False)
    assert response_text(response) == "ICP 30 -> 16; at or below 22 for 3.0 h"


def test_icp_response_stops_at_the_next_dose_and_says_at_least(demo: Formulary) -> None:
    # Second dose at 3 h: the first dose's time below counts readings before it only (1.5 h and 2.5 h), and
    # the ICP is still below 22 at the last of them: at least 1.0 h.
    readings = [reading(h, 85, icp) for h, icp in ((0.5, 30), (1.5, 18), (2.5, 16), (3.5, 28))]
    ep = episode(
        labs=[lab(0, 140)], doses=[dose(1, "mannitol-20", 350, 20), dose(3, "nacl-3", 250, 15)], readings=readings
    )
    first, second = icp_responses(build_timeline(ep, demo), demo.limits)
    assert (first.below_h, first.below_at_least) == (1.0, True)
    assert response_text(first) == "ICP 30 -> 16; at or below 22 for at least 1.0 h"
    # The second dose: no reading within 1 h before it but 2.5 h (16) is 0.5 h before; lowest after: 28.
    assert (second.before_mmhg, second.lowest_mmhg) == (16.0, 28.0)
    assert response_text(second) == "ICP 16 -> 28; above 22 at every reading after it"


def test_icp_response_in_show_json_the_timeline_and_the_plot(demo: Formulary) -> None:
    readings = [reading(h, 85, icp) for h, icp in ((0.5, 30), (1.5, 18), (2.5, 16), (3.5, 20), (4.5, 25))]
    ep = episode(labs=[lab(0, 140)], doses=[dose(1, "mannitol-20", 350, 20)], readings=readings)
    result = review(ep, demo)
    shown = review_json(result, "ep.json")
    assert shown["doses"][0]["icp_response"] == {
        "before_mmhg": 30.0,
        "before_time": "2026-12-01T08:30+00:00",
        "lowest_after_mmhg": 16.0,
        "lowest_after_time": "2026-12-01T10:30+00:00",
        "fall_mmhg": 14.0,
        "threshold_mmhg": 22.0,
        "at_or_below_threshold_h": 3.0,
        "at_or_below_threshold_at_least": False,
    }
    assert course_series(ep, demo).icp_responses == ((0.5, 30.0, 2.5, 16.0),)


# --- the overcorrection rescue -----------------------------------------------------------------


def test_rescue_with_the_high_risk_limit(demo: Formulary) -> None:
    # Sodium 104 (high risk of osmotic demyelination: 105 or below, Verbalis 2013) -> 114 in 12 h: past the
    # high-risk refuse limit of 8.  Back to 104 + 8 = 112 from 114 with 5 % glucose, TBW 42 L (the response
    # 104 -> 114 after 1 L of 3 % implies (513 - 114) / 10 = 39.9 L, the smaller: used):
    # V = -2 x 39.9 / (0 - 114 + 2) = 0.7125 L.
    ep = episode(labs=[lab(0, 104), lab(12, 114)], doses=[dose(1, "nacl-3", 1000, 60)])
    plan = plan_dose(ep, demo, {"agent": "glucose-5", "volume": "250", "time": at(12.5).isoformat()})
    rescue = plan.rescue
    assert rescue is not None
    assert (rescue.limit_mmol_l, rescue.target_sodium_mmol_l, rescue.from_sodium_mmol_l) == (8.0, 112.0, 114.0)
    assert rescue.tbw_l == pytest.approx(39.9)
    volumes = {v.agent: v.volume_ml for v in rescue.volumes}
    assert volumes["glucose-5"] == pytest.approx(2 * 39.9 / 112 * 1000)
    assert next(iter(volumes)) == "glucose-5"  # the sodium-free fluid first
    assert "follows local protocol" in rescue.caution


def test_no_rescue_within_the_limit_or_from_a_normal_sodium(tmp_path: Path, demo: Formulary) -> None:
    within = episode(labs=[lab(0, 120), lab(12, 128)], doses=[dose(1, "nacl-3", 500, 30)])
    assert plan_dose(within, demo, {"agent": "glucose-5", "volume": "250", "time": at(12.5).isoformat()}).rescue is None
    # 140 -> 152 in osmotherapy: the rise limits do not apply from a normal sodium (the ceilings do).
    normal = episode(labs=[lab(0, 140), lab(12, 152)], doses=[dose(1, "nacl-3", 1000, 60)])
    assert plan_dose(normal, demo, {"agent": "glucose-5", "volume": "250", "time": at(12.5).isoformat()}).rescue is None
    # A unit applying the rise limits up to 145 (the most the formulary allows) judges the same rise.
    unit = formulary_with_limits(tmp_path, sodium_rise_applies_below="145 mmol/L")
    assert plan_dose(normal, unit, {"agent": "glucose-5", "volume": "250", "time": at(12.5).isoformat()}).rescue


def test_review_json_carries_outputs_and_the_apparent_tbw(demo: Formulary) -> None:
    ep = episode(labs=[lab(0, 120), lab(6, 128)], doses=[dose(1, "nacl-3", 500, 30)]).with_entry(output(5, 800))
    shown = review_json(review(ep, demo), "ep.json")
    assert shown["outputs"] == [
        {"id": "U1", "time": "2026-12-01T13:00:00Z", "corrections": [], "volume_ml": 800.0, "sodium_mmol_l": None,
         "potassium_mmol_l": None, "over_min": None}
    ]  # fmt: skip
    assert shown["apparent_tbw_l"] == 24.1  # 24.0625, to 0.1 L as declared
    assert shown["doses"][0]["apparent_tbw_l"] == 24.1
    assert shown["apparent_tbw"]["intervals"][0]["note"] == "1 urine output without a sodium left out"
    assert episode_tbw_l(ep, demo) == 42.0
