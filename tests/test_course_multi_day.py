"""Rise limits over 48 h and over each later 24 h, the rise already used, and raised ICP from the readings.

Limits (demo formulary = the defaults): 18 mmol/L in 48 h (Verbalis JG et al. Am J Med 2013); at most
8 mmol/L in each 24 h after the first (Spasovski G et al. Eur J Endocrinol 2014, from memory of the
numbers); both where the rise limits apply (the lowest sodium of the 48 h up to the window's end below
135 mmol/L).  A later 24 h window is one whose lowest sample was drawn 24 h or more after the lowest
sodium of the correction.  The patient: a 70 kg man, total body water 0.6 x 70 = 42 L (Adrogue-Madias).
"""

from __future__ import annotations

import pytest

from osmodose.case.inputs import parse_check_request
from osmodose.course.findings import course_findings
from osmodose.course.plan import check_with_course, plan_dose
from osmodose.course.timeline import build_timeline
from osmodose.formulary import Formulary
from tests.course_build import at, dose, episode, lab, reading


def findings_of(ep, formulary: Formulary) -> dict[str, object]:  # type: ignore[no-untyped-def]
    return {x.code: x for x in course_findings(build_timeline(ep, formulary), formulary.limits)}


@pytest.mark.parametrize(
    ("day_two", "expected"),
    [
        # 115 -> 124 at 24 h (+9: warn, within 10) -> day two at 48 h.
        (132.0, {"sodium-rise-24h": "warn"}),  # +8 on day two: at the later-day limit; 48 h: +17
        (133.0, {"sodium-rise-24h": "warn", "sodium-rise-later-24h": "refuse"}),  # +9 > 8; 48 h: +18, at it
        (134.0, {"sodium-rise-24h": "warn", "sodium-rise-later-24h": "refuse", "sodium-rise-48h": "refuse"}),
    ],
)
def test_the_48_h_and_later_day_limits(demo: Formulary, day_two: float, expected: dict[str, str]) -> None:
    ep = episode(labs=[lab(0, 115), lab(24, 124), lab(48, day_two)])
    found = findings_of(ep, demo)
    assert {code: x.severity for code, x in found.items()} == expected  # type: ignore[attr-defined]


def test_the_48_h_message_names_both_labs(demo: Formulary) -> None:
    ep = episode(labs=[lab(0, 115), lab(24, 124), lab(48, 134)])
    found = findings_of(ep, demo)
    assert found["sodium-rise-48h"].message == (  # type: ignore[attr-defined]
        "measured sodium rose 19.0 mmol/L within 48 h (from 115.0 at 2026-12-01T08:00+00:00 to 134.0 at "
        "2026-12-03T08:00+00:00), above the refuse limit of 18 mmol/L"
    )
    assert found["sodium-rise-later-24h"].message == (  # type: ignore[attr-defined]
        "measured sodium rose 10.0 mmol/L within 24 h, a day or more after the lowest sodium (from 124.0 at "
        "2026-12-02T08:00+00:00 to 134.0 at 2026-12-03T08:00+00:00), above the refuse limit of 8 mmol/L"
    )


def test_a_window_that_starts_on_the_first_day_keeps_the_first_days_limits(demo: Formulary) -> None:
    # 115 at 0 h, 120 at 12 h, 129 at 36 h: the 24 h into 36 h starts at 12 h (< 24 h after the lowest):
    # +9 is judged by the first-day limits (warn above 8, refuse above 10), not by the later-day 8.
    ep = episode(labs=[lab(0, 115), lab(12, 120), lab(36, 129)])
    assert {code: x.severity for code, x in findings_of(ep, demo).items()} == {"sodium-rise-24h": "warn"}  # type: ignore[attr-defined]


def test_osmotherapy_from_a_normal_sodium_is_not_judged_over_days(demo: Formulary) -> None:
    ep = episode(labs=[lab(0, 140), lab(24, 150), lab(48, 159)])
    found = findings_of(ep, demo)
    assert not {"sodium-rise-48h", "sodium-rise-later-24h"} & set(found)


def test_a_plan_is_judged_over_48_h_and_on_a_later_day(demo: Formulary) -> None:
    # 115 at 0 h, 124 at 24 h; a plan at 25 h of 250 mL 3 % from 124:
    # 124 + 0.25 x (513 - 124) / 42.25 = 126.30; later day (the 24 h window's lowest, 124, is 24 h after 115):
    # +2.3 in it. Volume 1500 mL: 124 + 1.5 x 389 / 43.5 = 137.41: +13.4 on the later day (> 8), +22.4 in 48 h (> 18).
    ep = episode(labs=[lab(0, 115), lab(24, 124)])
    small = plan_dose(ep, demo, {"agent": "nacl-3", "volume": "250", "duration": "60", "time": at(25).isoformat()})
    assert not {"projected-rise-48h", "projected-rise-later-24h"} & {x.code for x in small.findings}
    big = plan_dose(ep, demo, {"agent": "nacl-3", "volume": "1500", "duration": "240", "time": at(25).isoformat()})
    found = {x.code: x for x in big.findings}
    assert found["projected-rise-48h"].value == pytest.approx(22.41, abs=0.01)
    assert found["projected-rise-later-24h"].severity == "refuse"
    assert found["projected-rise-later-24h"].message == (
        "projected sodium after this dose 137.4 mmol/L is 13.4 above the 124.0 measured at 2026-12-02T08:00+00:00, "
        "above the refuse limit of 8 mmol/L in 24 h, a day or more after the lowest sodium"
    )


def test_a_plan_shows_the_rise_already_used_in_its_budget(demo: Formulary) -> None:
    # 118 at 0 h, 124 at 6 h; plan at 7 h: 100 mL of 3 %: 124 + 0.1 x 389 / 42.1 = 124.92 (+0.92);
    # already used 124 - 118 = 6; total 6.92 of 8 (warn) / 10 (refuse), goal 4-8 (Verbalis 2013).
    ep = episode(labs=[lab(0, 118), lab(6, 124)])
    plan = plan_dose(ep, demo, {"agent": "nacl-3", "volume": "100", "duration": "30", "time": at(7).isoformat()})
    budget = plan.check.sodium_rise_budget
    assert budget is not None
    assert budget.already_used_mmol_l == pytest.approx(6.0)
    assert budget.rise_mmol_l == pytest.approx(0.924, abs=1e-3)
    assert budget.total_mmol_l == pytest.approx(6.924, abs=1e-3)
    assert (budget.warn_mmol_l, budget.refuse_mmol_l) == (8.0, 10.0)


def test_icp_readings_in_the_24_h_before_mark_raised_icp_for_a_plan(demo: Formulary) -> None:
    # ICP 25 > 22 mmHg (Carney 2017) at 2 h; a plan of 5 % glucose (lowers sodium) at 10 h is warned.
    labs = [lab(0, 140, glucose_mmol_l=6, urea_mmol_l=5)]
    raised = episode(labs=labs, readings=[reading(2, 80, 25)])
    order = {"agent": "glucose-5", "volume": "500", "duration": "60", "time": at(10).isoformat()}
    assert "hypotonic-raised-icp" in {x.code for x in plan_dose(raised, demo, order).check.findings}
    normal = episode(labs=labs, readings=[reading(2, 80, 15)])
    assert "hypotonic-raised-icp" not in {x.code for x in plan_dose(normal, demo, order).check.findings}
    stale = episode(labs=labs, readings=[reading(2, 80, 25)])
    late = {**order, "time": at(27).isoformat()}  # the reading is 25 h old
    assert "hypotonic-raised-icp" not in {x.code for x in plan_dose(stale, demo, late).check.findings}


def test_a_gap_after_mannitol_in_the_course_is_left_to_the_course_rules(demo: Formulary) -> None:
    # Mannitol at 1 h, then a lab with a gap of 17 (290 - (2 x 131 + 6 + 5) = 17): the plan's check does not
    # warn of a gap "with no mannitol ordered"; the course judges it as a gap after mannitol.
    ep = episode(
        labs=[
            lab(0, 131, glucose_mmol_l=6, urea_mmol_l=5),
            lab(6, 131, glucose_mmol_l=6, urea_mmol_l=5, osmolality_mosm_kg=290),
        ],
        doses=[dose(1, "mannitol-20", 350, 20)],
    )
    plan = plan_dose(ep, demo, {"agent": "nacl-3", "volume": "100", "duration": "30", "time": at(7).isoformat()})
    assert "osmolar-gap-unexplained" not in {x.code for x in plan.check.findings}


def test_check_with_a_course_counts_the_rise_already_used_and_judges_the_total(demo: Formulary) -> None:
    # Labs 118 at 0 h and 126 at 6 h; a check at 7 h with sodium 126 typed, 250 mL of 3 %:
    # 126 + 0.25 x 387 / 42.25 = 128.29 (+2.29); 126 - 118 = 8 already used; total +10.29 > 10 from 118: refused.
    ep = episode(labs=[lab(0, 118), lab(6, 126)])
    request = parse_check_request(
        {
            "weight": "70",
            "age": "45",
            "sex": "male",
            "sodium": "126",
            "agent": "nacl-3",
            "volume": "250",
            "duration": "30",
        }
    )
    result = check_with_course(request, demo, ep, at(7))
    budget = result.sodium_rise_budget
    assert budget is not None and budget.already_used_mmol_l == pytest.approx(8.0)
    assert budget.total_mmol_l == pytest.approx(10.29, abs=0.01)
    codes = {x.code: x.severity for x in result.findings}
    assert codes["projected-rise-24h"] == "refuse"
    assert result.status == "refuse"
