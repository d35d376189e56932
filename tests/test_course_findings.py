"""Findings across a course: any-24 h sodium windows, ceilings, osmolar gap, mannitol, pressures, lab age."""

from __future__ import annotations

import numpy as np
import pytest

from osmodose.course.findings import course_findings
from osmodose.course.timeline import build_timeline, window_change
from osmodose.formulary import Formulary
from tests.course_build import dose, episode, formulary_with_limits, lab, reading


def findings_of(ep, formulary: Formulary) -> dict[str, object]:
    return {x.code: x for x in course_findings(build_timeline(ep, formulary), formulary.limits)}


# Limits: sodium rise in 24 h warn above 8, refuse above 10 mmol/L (Verbalis JG et al. Am J Med 2013;
# Spasovski G et al. Eur J Endocrinol 2014); sodium fall warn above 10 (secondary sources).


def test_a_13_mmol_rise_spread_over_three_labs_within_24_h_is_refused(demo: Formulary) -> None:
    # 118 at 0 h, 124 at 6 h, 131 at 22 h: no step is above 8, but 131 - 118 = 13 within 22 h > 10.
    ep = episode(labs=[lab(0, 118), lab(6, 124), lab(22, 131)])
    found = findings_of(ep, demo)["sodium-rise-24h"]
    assert found.severity == "refuse"
    assert found.value == 13.0
    assert found.limit == 10.0
    assert found.message == (
        "measured sodium rose 13.0 mmol/L within 24 h (from 118.0 at 2026-12-01T08:00+00:00 to 131.0 at "
        "2026-12-02T06:00+00:00), above the refuse limit of 10 mmol/L (1 of 3 labs crossing a limit)"
    )


def test_the_same_13_mmol_rise_over_30_h_is_not_a_finding(demo: Formulary) -> None:
    # 118 at 0 h, 124.5 at 15 h, 131 at 30 h: each 24 h window holds at most one 6.5 step.
    ep = episode(labs=[lab(0, 118), lab(15, 124.5), lab(30, 131)])
    assert "sodium-rise-24h" not in findings_of(ep, demo)
    # The first lab has no earlier lab to rise from: n/a (NaN), not 0.
    assert np.isnan(build_timeline(ep, demo).labs.sodium_window.rise[0])
    assert build_timeline(ep, demo).labs.sodium_window.rise[1:].tolist() == [6.5, 6.5]


def test_two_labs_exactly_24_h_apart_are_in_one_window(demo: Formulary) -> None:
    # The window is inclusive (the cautious reading): 131 - 118 = 13 at exactly 24 h is caught.
    ep = episode(labs=[lab(0, 118), lab(24, 131)])
    assert findings_of(ep, demo)["sodium-rise-24h"].severity == "refuse"


@pytest.mark.parametrize(
    ("later", "severity"),
    [
        (126.0, None),  # 8.0: equal to the warn limit is not above it
        (126.5, "warn"),  # 8.5 > 8
        (128.0, "warn"),  # 10.0: equal to the refuse limit is only a warning
        (128.5, "refuse"),  # 10.5 > 10
    ],
)
def test_sodium_rise_is_judged_strictly_above_each_limit(demo: Formulary, later: float, severity: str | None) -> None:
    found = findings_of(episode(labs=[lab(0, 118), lab(12, later)]), demo).get("sodium-rise-24h")
    assert (found.severity if found else None) == severity


def test_a_fall_over_10_in_24_h_is_warned(demo: Formulary) -> None:
    # 150 at 0 h, 144 at 6 h, 139 at 12 h: fall 150 - 139 = 11 > 10 (secondary sources: about 10 a day).
    found = findings_of(episode(labs=[lab(0, 150), lab(6, 144), lab(12, 139)]), demo)["sodium-fall-24h"]
    assert (found.severity, found.value) == ("warn", 11.0)


def test_window_change_is_vectorised_over_any_window() -> None:
    hours = np.asarray([0.0, 6.0, 22.0, 40.0])
    change = window_change(hours * 3600, np.asarray([118.0, 124.0, 131.0, 128.0]))
    # 40 h looks back to 16 h: only 131 (22 h) and itself: rise 0 (a real 0: it fell), fall 3.
    # The first sample has nothing earlier in its window: NaN, not a rise of 0.
    assert np.isnan(change.rise[0]) and np.isnan(change.fall[0])
    assert change.rise[1:].tolist() == [6.0, 13.0, 0.0]
    assert change.fall[1:].tolist() == [0.0, 0.0, 3.0]
    assert change.low_index.tolist() == [0, 0, 0, 3]


@pytest.mark.parametrize(
    ("sodium", "severity"),
    [(155.0, None), (157.0, "warn"), (161.0, "refuse")],  # demo formulary: warn 155, refuse 160
)
def test_measured_sodium_ceiling(demo: Formulary, sodium: float, severity: str | None) -> None:
    found = findings_of(episode(labs=[lab(0, 150), lab(6, sodium)]), demo).get("sodium-high")
    assert (found.severity if found else None) == severity


def test_osmolality_ceiling_uses_the_calculated_value_when_none_was_measured(demo: Formulary) -> None:
    # 2 x 155 + 6 + 5 = 321 mOsm/kg calculated > 320 (Hinson HE et al. J Intensive Care Med 2013).
    found = findings_of(episode(labs=[lab(0, 155, glucose_mmol_l=6, urea_mmol_l=5)]), demo)["osmolality-high"]
    assert found.severity == "refuse"
    assert found.message == (
        "calculated osmolality 321.0 mOsm/kg at 2026-12-01T08:00+00:00 (the latest) is above the refuse limit "
        "of 320 mOsm/kg"
    )


def test_an_earlier_peak_above_a_ceiling_only_warns_once_sodium_is_back_under_it(demo: Formulary) -> None:
    # 161 > 160 refuse at 0 h, 152 at 12 h: the next dose starts from 152, the peak stays on record as a warning.
    found = findings_of(episode(labs=[lab(0, 161), lab(12, 152)]), demo)
    assert "sodium-high" not in found
    assert found["sodium-was-high"].severity == "warn"
    assert found["sodium-was-high"].message == (
        "measured sodium 161.0 mmol/L at 2026-12-01T08:00+00:00 was above the refuse limit of 160 mmol/L; "
        "the latest is 152.0 at 2026-12-01T20:00+00:00"
    )


def _gap_lab(hours: float, measured: float):
    # Calculated 2 x 140 + 6 + 5 = 291 mOsm/kg, so the gap is measured - 291.
    return lab(hours, 140, glucose_mmol_l=6, urea_mmol_l=5, osmolality_mosm_kg=measured)


def test_an_osmolar_gap_growing_across_mannitol_is_warned(demo: Formulary) -> None:
    # Gap 294 - 291 = 3 before mannitol, 305 - 291 = 14 after: rise 11 > 10 (common practice).
    ep = episode(labs=[_gap_lab(0, 294), _gap_lab(8, 305)], doses=[dose(1, "mannitol-20", 350)])
    found = findings_of(ep, demo)["osmolar-gap-rising"]
    assert (found.severity, found.value, found.limit) == ("warn", 11.0, 10.0)
    assert found.message == (
        "osmolar gap rose 11.0 mOsm/kg across mannitol (from 3.0 at 2026-12-01T08:00+00:00 to 14.0 at "
        "2026-12-01T16:00+00:00), above the warn limit of 10 mOsm/kg: mannitol may be accumulating"
    )


def test_a_gap_growing_with_no_mannitol_between_the_labs_is_not_blamed_on_mannitol(demo: Formulary) -> None:
    ep = episode(labs=[_gap_lab(0, 294), _gap_lab(8, 305)], doses=[dose(9, "mannitol-20", 350)])
    assert "osmolar-gap-rising" not in findings_of(ep, demo)


def test_a_high_gap_after_mannitol_is_refused_above_the_hold_threshold(demo: Formulary) -> None:
    # 313 - 291 = 22 > 20, the common hold threshold (common practice; sources vary from 10 to 20).
    ep = episode(labs=[_gap_lab(6, 313)], doses=[dose(1, "mannitol-20", 350)])
    found = findings_of(ep, demo)["osmolar-gap-high"]
    assert (found.value, found.severity, found.limit) == (22.0, "refuse", 20.0)
    assert found.message == (
        "osmolar gap 22.0 mOsm/kg at 2026-12-01T14:00+00:00 (the latest), after mannitol, is above the refuse "
        "limit of 20 mOsm/kg"
    )


# Osmolar gap after mannitol: warn above 10 (published upper normal, McMaster Textbook of Internal Medicine),
# refuse above 20 (common practice: a common hold threshold).


@pytest.mark.parametrize(
    ("measured", "severity"),
    [
        (301.0, None),  # gap 10: at the warn limit
        (305.0, "warn"),  # gap 14 > 10
        (311.0, "warn"),  # gap 20: at the refuse limit
        (313.0, "refuse"),  # gap 22 > 20
    ],
)
def test_the_latest_gap_after_mannitol_is_warned_above_10_and_refused_above_20(
    demo: Formulary, measured: float, severity: str | None
) -> None:
    ep = episode(labs=[_gap_lab(6, measured)], doses=[dose(1, "mannitol-20", 350)])
    found = findings_of(ep, demo).get("osmolar-gap-high")
    assert (found.severity if found else None) == severity


def test_a_high_gap_that_has_come_down_only_warns(demo: Formulary) -> None:
    # Gap 22 at 6 h (refuse), then 296 - 291 = 5 at 12 h: the peak stays on record as a warning.
    ep = episode(labs=[_gap_lab(6, 313), _gap_lab(12, 296)], doses=[dose(1, "mannitol-20", 350)])
    found = findings_of(ep, demo)
    assert "osmolar-gap-high" not in found
    assert found["osmolar-gap-was-high"].severity == "warn"
    assert found["osmolar-gap-was-high"].message == (
        "osmolar gap 22.0 mOsm/kg at 2026-12-01T14:00+00:00, after mannitol, was above the refuse limit of "
        "20 mOsm/kg; the latest is 5.0 at 2026-12-01T20:00+00:00"
    )


def test_cumulative_mannitol_in_24_h_against_the_units_cap(tmp_path, demo: Formulary) -> None:
    # 20 % mannitol = 200 g/L: 350 mL = 70 g = 1 g/kg for 70 kg; 70 + 70 + 35 g = 175 g = 2.5 g/kg in 20 h.
    capped = formulary_with_limits(tmp_path, mannitol_24h_max="2 g/kg")
    ep = episode(doses=[dose(0, "mannitol-20", 350), dose(12, "mannitol-20", 350), dose(20, "mannitol-20", 175)])
    found = findings_of(ep, capped)["mannitol-24h"]
    assert found.value == pytest.approx(2.5)
    assert found.message == (
        "mannitol 2.50 g/kg within the 24 h up to the dose at 2026-12-02T04:00+00:00 is above the warn limit of 2 g/kg"
    )
    assert "mannitol-24h" not in findings_of(ep, demo)  # the demo unit sets no cap


def test_mannitol_more_than_24_h_apart_does_not_add_up(tmp_path) -> None:
    capped = formulary_with_limits(tmp_path, mannitol_24h_max="1.5 g/kg")
    ep = episode(doses=[dose(0, "mannitol-20", 350), dose(25, "mannitol-20", 350)])
    assert build_timeline(ep, capped).doses.mannitol_24h_g_per_kg.tolist() == pytest.approx([1.0, 1.0])
    assert "mannitol-24h" not in findings_of(ep, capped)


def test_cpp_is_map_minus_icp_against_the_brain_trauma_foundation_limits(demo: Formulary) -> None:
    # Carney N et al. Neurosurgery 2017;80:6-15: treat ICP above 22 mmHg, CPP target 60-70 mmHg.
    ep = episode(readings=[reading(0, 80, 25), reading(1, 82, 22), reading(2, 80, 20)])
    found = findings_of(ep, demo)
    assert build_timeline(ep, demo).readings.cpp.tolist() == [55.0, 60.0, 60.0]
    assert found["icp-high"].message == (
        "ICP 25 mmHg at 2026-12-01T08:00+00:00 is above the treatment threshold of 22 mmHg "
        "(1 of 3 readings crossing a limit)"
    )
    assert found["cpp-low"].message == (
        "CPP 55 mmHg (MAP 80 - ICP 25) at 2026-12-01T08:00+00:00 is below the target of 60 mmHg "
        "(1 of 3 readings crossing a limit)"
    )


def test_pressures_at_the_limits_are_not_findings(demo: Formulary) -> None:
    found = findings_of(episode(readings=[reading(0, 82, 22)]), demo)  # ICP 22, CPP 60
    assert "icp-high" not in found and "cpp-low" not in found


def test_a_dose_given_on_labs_older_than_6_h_is_warned(demo: Formulary) -> None:
    # lab_max_age 6 h (common practice: re-measure every 2-6 h): 7 h and 9 h old; 6 h exactly is not above.
    ep = episode(labs=[lab(0, 130)], doses=[dose(6, "nacl-3", 100), dose(7, "nacl-3", 100), dose(9, "nacl-3", 100)])
    found = findings_of(ep, demo)["labs-too-old"]
    assert found.value == 9.0
    assert found.message == (
        "the dose of nacl-3 at 2026-12-01T17:00+00:00 was given on labs 9.0 h old, older than the 6 h limit "
        "(2 of 3 doses crossing a limit)"
    )


def test_a_dose_before_any_lab_is_warned(demo: Formulary) -> None:
    found = findings_of(episode(doses=[dose(0, "nacl-3", 100)], labs=[lab(1, 130)]), demo)["labs-too-old"]
    assert found.value is None
    assert found.message == ("the dose of nacl-3 at 2026-12-01T08:00+00:00 was given with no labs before it")


def test_a_dose_of_an_agent_missing_from_the_formulary_is_an_input_error(demo: Formulary) -> None:
    from osmodose.errors import InputError

    with pytest.raises(InputError) as caught:
        build_timeline(episode(doses=[dose(0, "nacl-5", 100)]), demo)
    assert str(caught.value).startswith(
        "doses[1].agent_id: nacl-5 is not an agent of this formulary (accepted: one of:"
    )
