"""When the 24 h rise limits apply, the high-risk refuse limit, falls and a lowered projected sodium.

Limits (demo formulary = the defaults): rise warn above 8, refuse above 10 mmol/L in 24 h (Verbalis JG et al.
Am J Med 2013;126:S1-42; Spasovski G et al. Eur J Endocrinol 2014); they apply only when the lowest sodium
measured in the 48 h up to the window's end is below 135 mmol/L (hyponatraemia, same guidelines); refuse
above 8 when the risk of osmotic demyelination is high: sodium 105 mmol/L or below, or potassium below
3.5 mmol/L (Verbalis 2013).  Fall warn above 10 (secondary sources), refuse above 12 (common practice).
Projected sodium after a lowering dose: warn below 130, refuse below 125 (common practice).
"""

from __future__ import annotations

import numpy as np
import pytest

from osmodose.course.findings import course_findings
from osmodose.course.plan import plan_dose
from osmodose.course.report import review, timeline_rows
from osmodose.course.timeline import build_timeline
from osmodose.formulary import Formulary
from tests.course_build import at, dose, episode, lab


def findings_of(ep, formulary: Formulary) -> dict[str, object]:
    return {x.code: x for x in course_findings(build_timeline(ep, formulary), formulary.limits)}


def plan_codes(ep, formulary: Formulary, hours: float, **order: str) -> dict[str, str]:
    plan = plan_dose(ep, formulary, {**order, "time": at(hours).isoformat()})
    return {x.code: x.severity for x in plan.findings}


def test_osmotherapy_from_a_normal_sodium_is_left_to_the_ceilings(demo: Formulary) -> None:
    # 140 -> 146 -> 151 over 12 h: a rise of 11 within 24 h, but the lowest sodium in the 48 h is 140,
    # not below 135: no rise finding; 151 is under the 155 warn ceiling (common practice).
    ep = episode(labs=[lab(0, 140), lab(6, 146), lab(12, 151)])
    assert findings_of(ep, demo) == {}
    # The rise is still shown as a figure in the timeline.
    assert build_timeline(ep, demo).labs.sodium_window.rise[2] == 11.0
    assert timeline_rows(review(ep, demo))[2][2].endswith("24 h rise +11.0")


def test_a_correction_from_125_yesterday_is_still_judged_now_it_is_136(demo: Formulary) -> None:
    # 125 at 08:00, 136 at 06:00 next day (22 h): 136 - 125 = 11 > 10, and 125 < 135: refused.
    found = findings_of(episode(labs=[lab(0, 125), lab(22, 136)]), demo)["sodium-rise-24h"]
    assert (found.severity, found.value, found.limit) == ("refuse", 11.0, 10.0)


def test_the_low_sodium_that_makes_the_limits_apply_may_lie_before_the_24_h_window(demo: Formulary) -> None:
    # 125 at 0 h, 136 at 30 h, 146 at 46 h: the 24 h window into 46 h holds 136 and 146 (rise 10 > 8: warn,
    # not above 10); the 48 h up to 46 h reach back to -2 h and hold the 125, so the limits apply.
    found = findings_of(episode(labs=[lab(0, 125), lab(30, 136), lab(46, 146)]), demo)["sodium-rise-24h"]
    assert (found.severity, found.value) == ("warn", 10.0)
    # Without the 125 the same 136 -> 146 is osmotherapy from a normal sodium: no rise finding.
    assert "sodium-rise-24h" not in findings_of(episode(labs=[lab(30, 136), lab(46, 146)]), demo)


def test_a_sodium_of_105_or_below_refuses_a_rise_above_8(demo: Formulary) -> None:
    # 104 -> 113 in 12 h: 9 > 8 (high-risk refuse limit), though only a warning (9 <= 10) at normal risk.
    found = findings_of(episode(labs=[lab(0, 104), lab(12, 113)]), demo)["sodium-rise-24h"]
    assert (found.severity, found.limit) == ("refuse", 8.0)
    assert found.message == (
        "measured sodium rose 9.0 mmol/L within 24 h (from 104.0 at 2026-12-01T08:00+00:00 to 113.0 at "
        "2026-12-01T20:00+00:00), above the refuse limit of 8 mmol/L (high risk of osmotic demyelination: "
        "sodium 105 mmol/L or below, or potassium below 3.5 mmol/L, within 48 h) (1 of 2 labs crossing a limit)"
    )


@pytest.mark.parametrize(
    ("potassium", "severity"),
    [
        (3.2, "refuse"),  # hypokalaemia: 9 > 8 refused (Verbalis 2013)
        (3.5, "warn"),  # 3.5 is not below 3.5: normal risk, 9 > 8 warned only
        (None, "warn"),  # potassium not measured: nothing says the risk is high
    ],
)
def test_hypokalaemia_within_48_h_refuses_a_rise_above_8(
    demo: Formulary, potassium: float | None, severity: str
) -> None:
    first = lab(0, 120) if potassium is None else lab(0, 120, potassium_mmol_l=potassium)
    found = findings_of(episode(labs=[first, lab(12, 129)]), demo)["sodium-rise-24h"]
    assert found.severity == severity


def test_a_rise_within_rounding_of_the_limit_is_at_the_limit(demo: Formulary) -> None:
    # 128.3 - 120.3 = 8.000000000000014 in binary floating point: at the 8 limit, as `osmodose check` judges.
    assert 128.3 - 120.3 > 8.0
    assert "sodium-rise-24h" not in findings_of(episode(labs=[lab(0, 120.3), lab(12, 128.3)]), demo)


@pytest.mark.parametrize(
    ("later", "severity"),
    [
        (139.0, "warn"),  # fall 11 > 10
        (138.0, "warn"),  # fall 12: at the refuse limit, not above it
        (137.0, "refuse"),  # fall 13 > 12
    ],
)
def test_a_measured_fall_above_12_in_24_h_is_refused(demo: Formulary, later: float, severity: str) -> None:
    found = findings_of(episode(labs=[lab(0, 150), lab(12, later)]), demo)["sodium-fall-24h"]
    assert found.severity == severity


def test_a_lone_lab_or_one_30_h_after_the_last_has_no_24_h_change(demo: Formulary) -> None:
    ep = episode(labs=[lab(0, 130), lab(30, 136)])
    labs = build_timeline(ep, demo).labs
    assert np.isnan(labs.sodium_window.rise).all() and np.isnan(labs.sodium_window.fall).all()
    rows = timeline_rows(review(ep, demo))
    assert rows[0][2] == "Na 130.0"
    assert rows[1][2] == "Na 136.0  24 h rise n/a"
    assert findings_of(ep, demo) == {}


def test_plan_projects_no_rise_finding_for_osmotherapy_from_a_normal_sodium(demo: Formulary) -> None:
    # 140 + 1 x (513 - 140) / (42 + 1) = 140 + 8.67 (Chen S et al. Kidney360 2021): 8.67 > 8 but 140 >= 135.
    codes = plan_codes(episode(labs=[lab(0, 140)]), demo, 1, agent="nacl-3", volume="1000")
    assert "projected-rise-24h" not in codes


def test_plan_refuses_a_projected_rise_above_8_from_a_sodium_of_105_or_below(demo: Formulary) -> None:
    # 104 + 1 x (513 - 104) / 43 = 104 + 9.51: above 8, the high-risk refuse limit (a warning at normal risk).
    plan = plan_dose(
        episode(labs=[lab(0, 104)]), demo, {"agent": "nacl-3", "volume": "1000", "time": at(1).isoformat()}
    )
    found = {x.code: x for x in plan.findings}["projected-rise-24h"]
    assert (found.severity, found.limit) == ("refuse", 8.0)
    assert found.value == pytest.approx(409 / 43)


def test_plan_still_judges_a_projected_rise_from_yesterdays_low_sodium(demo: Formulary) -> None:
    # 125 at 0 h, 133 at 20 h; 250 mL 3 % at 21 h: 133 + 0.25 x 380 / 42.25 = 135.25; 135.25 - 125 = 10.25 > 10.
    codes = plan_codes(episode(labs=[lab(0, 125), lab(20, 133)]), demo, 21, agent="nacl-3", volume="250")
    assert codes["projected-rise-24h"] == "refuse"


@pytest.mark.parametrize(
    ("volume", "severity"),
    [
        ("2000", "warn"),  # 132 - 2 x 132 / 44 = 126.0: below 130, not below 125
        ("3000", "refuse"),  # 132 - 3 x 132 / 45 = 123.2: below 125
    ],
)
def test_plan_judges_the_sodium_a_lowering_dose_leaves_against_the_low_limits(
    demo: Formulary, volume: str, severity: str
) -> None:
    # 5 % glucose carries no sodium: mass balance 132 + V (0 - 132) / (42 + V) (Chen S et al. Kidney360 2021).
    plan = plan_dose(
        episode(labs=[lab(0, 132)]), demo, {"agent": "glucose-5", "volume": volume, "time": at(1).isoformat()}
    )
    found = {x.code: x for x in (*plan.findings, *plan.check.findings)}
    low = found["projected-sodium-low"]
    assert low.severity == severity


def test_plan_refuses_a_projected_fall_above_12_in_24_h(demo: Formulary) -> None:
    # 150 - 4 x 150 / 46 = 136.96: a fall of 13.04 from the 150 measured an hour before, above 12.
    codes = plan_codes(episode(labs=[lab(0, 150)]), demo, 1, agent="glucose-5", volume="4000")
    assert codes["projected-fall-24h"] == "refuse"


def test_show_judges_a_lowered_projected_sodium_now(demo: Formulary) -> None:
    # 132 at 0 h, 2 L of 5 % glucose at 1 h: projected 126.0 now, below 130 (warn).
    ep = episode(labs=[lab(0, 132)], doses=[dose(1, "glucose-5", 2000)])
    found = {x.code: x for x in review(ep, demo).findings}["projected-sodium-low"]
    assert (found.severity, found.value) == ("warn", pytest.approx(126.0))
    assert found.message == (
        "projected sodium now 126.0 mmol/L, lowered from 132.0, is below the warn limit of 130 mmol/L"
    )
