"""Sodium projected through the doses given, and the plan of the next dose."""

from __future__ import annotations

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from osmodose.case.inputs import parse_check_request
from osmodose.check.run import run_check
from osmodose.course.plan import plan_dose
from osmodose.course.projection import episode_tbw_l, project_now, projected_path
from osmodose.course.timeline import build_timeline
from osmodose.errors import InputError
from osmodose.formulary import Formulary
from tests.course_build import at, dose, episode, formulary_with_limits, lab

# 3 % NaCl: sodium 513 mmol/L as on the product label (the demo formulary states it).
# Lab 118 mmol/L, 70 kg man, TBW 42 L, two doses of 150 mL, by mass balance (Chen S et al. Kidney360 2021):
#   after dose 1: 118 + 0.15 x (513 - 118) / (42 + 0.15) = 118 + 59.25 / 42.15 = 119.4057
#   after dose 2: 119.4057 + 0.15 x (513 - 119.4057) / 42.15 = 119.4057 + 59.0391 / 42.15 = 120.8064
AFTER_ONE = 119.4057
AFTER_TWO = 120.8064


def _engine(sodium: float, volume_ml: float, demo: Formulary, agent: str = "nacl-3") -> float:
    request = parse_check_request(
        {"weight": 70, "age": 45, "sex": "male", "sodium": sodium, "agent": agent, "volume": volume_ml}
    )
    projected = run_check(request, demo).projected_sodium_mmol_l
    assert projected is not None
    return projected


def _now(ep, formulary: Formulary, hours: float):
    timeline = build_timeline(ep, formulary)
    return project_now(ep, timeline, episode_tbw_l(ep, formulary), at(hours))


def test_projection_through_two_doses_equals_the_engine_applied_twice(demo: Formulary) -> None:
    ep = episode(labs=[lab(0, 118)], doses=[dose(0.5, "nacl-3", 150, 20), dose(1.5, "nacl-3", 150, 20)])
    projection = _now(ep, demo, 2)
    twice = _engine(_engine(118, 150, demo), 150, demo)
    assert projection.sodium_now == pytest.approx(twice, abs=1e-9)
    assert projection.after_each.tolist() == pytest.approx([AFTER_ONE, AFTER_TWO], abs=1e-4)


@settings(max_examples=25, deadline=None)
@given(
    start=st.floats(110, 150),
    volumes=st.lists(st.floats(10, 500), min_size=1, max_size=4),
)
def test_projection_through_any_doses_equals_the_engine_applied_dose_by_dose(
    demo: Formulary, start: float, volumes: list[float]
) -> None:
    ep = episode(labs=[lab(0, start)], doses=[dose(1 + k, "nacl-3", v) for k, v in enumerate(volumes)])
    expected = start
    for volume in volumes:
        expected = _engine(expected, volume, demo)
    assert _now(ep, demo, 10).sodium_now == pytest.approx(expected, abs=1e-9)


def test_only_doses_since_the_latest_lab_are_projected(demo: Formulary) -> None:
    # The 2 h lab already reflects the first dose: projection starts at 120 and takes the second dose only.
    ep = episode(labs=[lab(0, 118), lab(2, 120)], doses=[dose(1, "nacl-3", 150), dose(3, "nacl-3", 150)])
    projection = _now(ep, demo, 4)
    assert projection.lab_sodium == 120
    assert projection.sodium_now == pytest.approx(_engine(120, 150, demo), abs=1e-9)


def test_a_dose_at_a_labs_minute_counts_as_given_after_it(demo: Formulary) -> None:
    ep = episode(labs=[lab(0, 118)], doses=[dose(0, "nacl-3", 150)])
    assert _now(ep, demo, 1).sodium_now == pytest.approx(AFTER_ONE, abs=1e-4)


def test_mannitol_leaves_the_projection_where_it_was_with_a_note(demo: Formulary) -> None:
    ep = episode(labs=[lab(0, 140)], doses=[dose(1, "mannitol-20", 350)])
    projection = _now(ep, demo, 2)
    assert projection.sodium_now == 140
    assert projection.notes == [
        "1 mannitol dose since the latest lab: not in the sodium projection "
        "(mannitol carries no sodium; the formula does not model its effect)."
    ]


def test_projected_path_starts_at_each_lab_and_steps_at_each_dose_end(demo: Formulary) -> None:
    ep = episode(labs=[lab(0, 118), lab(4, 121)], doses=[dose(0.5, "nacl-3", 150, 30), dose(1.5, "nacl-3", 150)])
    path = projected_path(build_timeline(ep, demo), 42.0)
    hours = [(t - at(0).timestamp()) / 3600 for t in path.t]
    assert hours[:3] == [0.0, 1.0, 1.5]  # lab, end of the 30 min infusion, the push
    assert path.sodium[:3].tolist() == pytest.approx([118, AFTER_ONE, AFTER_TWO], abs=1e-4)
    assert path.sodium[4] == 121  # the next lab starts a new segment after the NaN break


def test_plan_checks_the_next_dose_from_the_projected_sodium(demo: Formulary) -> None:
    ep = episode(labs=[lab(0, 118)], doses=[dose(0.5, "nacl-3", 150), dose(1.5, "nacl-3", 150)])
    plan = plan_dose(ep, demo, {"agent": "nacl-3", "volume": "150", "time": at(2).isoformat()})
    assert plan.projection.sodium_now == pytest.approx(AFTER_TWO, abs=1e-4)
    # The third dose is the engine from 120.8064: the same as the engine applied three times.
    assert plan.sodium_after == pytest.approx(_engine(_engine(_engine(118, 150, demo), 150, demo), 150, demo))
    assert plan.check.labs["sodium_mmol_l"] == pytest.approx(AFTER_TWO, abs=1e-4)


def test_plan_warns_when_the_next_dose_would_take_the_24_h_rise_past_the_limit(demo: Formulary) -> None:
    # Lowest sodium in 24 h: 118 at 0 h. 124 measured at 6 h; 250 mL 3 %: 124 + 0.25 x 389 / 42.25 = 126.30.
    ep = episode(labs=[lab(0, 118), lab(6, 124)])
    plan = plan_dose(ep, demo, {"agent": "nacl-3", "volume": "250", "time": at(7).isoformat()})
    found = {x.code: x for x in plan.findings}["projected-rise-24h"]
    assert found.value == pytest.approx(8.30, abs=0.01)
    assert found.message == (
        "projected sodium after this dose 126.3 mmol/L is 8.3 above the 118.0 measured at "
        "2026-12-01T08:00+00:00, above the warn limit of 8 mmol/L in 24 h"
    )
    assert plan.status == "warn"


def test_plan_warns_when_the_latest_labs_are_too_old(demo: Formulary) -> None:
    plan = plan_dose(episode(labs=[lab(0, 140)]), demo, {"agent": "nacl-3", "volume": "100", "time": at(8).isoformat()})
    assert [x.message for x in plan.findings if x.code == "labs-too-old"] == [
        "the latest labs (2026-12-01T08:00+00:00) are 8.0 h old at 2026-12-01T16:00+00:00, "
        "older than the 6 h limit: re-measure before dosing"
    ]


def test_plan_adds_the_planned_mannitol_to_the_24_h_total(tmp_path) -> None:
    # Cap 1.5 g/kg; 70 g given at 1 h + 1 g/kg (70 g) planned = 140 g / 70 kg = 2.0 g/kg.
    capped = formulary_with_limits(tmp_path, mannitol_24h_max="1.5 g/kg")
    ep = episode(labs=[lab(0, 140)], doses=[dose(1, "mannitol-20", 350)])
    plan = plan_dose(ep, capped, {"agent": "mannitol-20", "dose": "1g/kg", "time": at(4).isoformat()})
    found = {x.code: x for x in plan.findings}["mannitol-24h"]
    assert found.value == pytest.approx(2.0)
    assert plan.sodium_after is None  # no sodium projection for mannitol


def test_plan_without_a_lab_is_an_input_error(demo: Formulary) -> None:
    with pytest.raises(InputError) as caught:
        plan_dose(episode(), demo, {"agent": "nacl-3", "volume": "100", "time": at(0).isoformat()})
    assert str(caught.value) == (
        "plan: needs a lab drawn at or before 2026-12-01T08:00+00:00 (accepted: osmodose course add-lab FILE ...)"
    )


def test_a_watson_default_without_a_height_uses_the_fractions_and_says_so(tmp_path) -> None:
    from osmodose.course.report import review
    from osmodose.formulary import demo_formulary_path, load_formulary

    source = (
        demo_formulary_path()
        .read_text(encoding="utf-8")
        .replace('ethanol_factor = "molar"', 'ethanol_factor = "molar"\ntbw_method = "watson"')
    )
    path = tmp_path / "watson.toml"
    path.write_text(source, encoding="utf-8")
    watson = load_formulary(path)
    result = review(episode(labs=[lab(0, 130)]), watson)
    assert (result.tbw_method, result.tbw_l) == ("fraction", 42.0)  # 0.6 x 70, not a Watson figure
    assert result.notes == [
        "No height in the episode: total body water by the Adrogue-Madias fractions, "
        "not by the formulary's default Watson formula."
    ]


def test_an_episode_with_a_height_follows_a_watson_default(tmp_path) -> None:
    from osmodose.course.episode import EpisodePatient
    from osmodose.course.report import review
    from osmodose.formulary import demo_formulary_path, load_formulary

    source = (
        demo_formulary_path()
        .read_text(encoding="utf-8")
        .replace('ethanol_factor = "molar"', 'ethanol_factor = "molar"\ntbw_method = "watson"')
    )
    path = tmp_path / "watson.toml"
    path.write_text(source, encoding="utf-8")
    man = EpisodePatient(weight_kg=80, age_years=35, sex="male", height_cm=180)
    # Watson PE et al. Am J Clin Nutr 1980: 2.447 - 0.09516 x 35 + 0.1074 x 180 + 0.3362 x 80 = 45.34 L.
    result = review(episode(labs=[lab(0, 130)], patient=man), load_formulary(path))
    assert result.tbw_method == "watson"
    assert result.tbw_l == pytest.approx(45.34, abs=0.01)
