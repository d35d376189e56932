"""Typed text to episode entries: times, labs with units, doses, readings."""

from __future__ import annotations

import time
from datetime import UTC, datetime, timedelta, timezone

import pytest

from osmodose.course.entries import parse_dose_entry, parse_lab, parse_patient, parse_reading, parse_time
from osmodose.errors import InputError
from osmodose.formulary import Formulary
from tests.course_build import episode


@pytest.fixture
def central_european_time(monkeypatch: pytest.MonkeyPatch):
    """This computer's local time set to CET/CEST by a POSIX rule (no time-zone database needed)."""
    monkeypatch.setenv("TZ", "CET-1CEST,M3.5.0,M10.5.0/3")
    time.tzset()
    yield
    monkeypatch.undo()
    time.tzset()


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("2026-12-01T08:30+00:00", datetime(2026, 12, 1, 8, 30, tzinfo=UTC)),
        ("2026-12-01T08:30Z", datetime(2026, 12, 1, 8, 30, tzinfo=UTC)),
        ("2026-12-01 09:30+01:00", datetime(2026, 12, 1, 8, 30, tzinfo=UTC)),
    ],
)
def test_times_with_an_offset_are_taken_as_written(text: str, expected: datetime) -> None:
    assert parse_time(text) == expected


def test_a_time_without_an_offset_is_this_computers_local_time_on_that_date(central_european_time) -> None:
    # CET is UTC+1 in winter, CEST UTC+2 in summer: the offset is the one in force on that date.
    winter = parse_time("2026-12-01T08:30")
    summer = parse_time("2026-07-01T08:30")
    assert winter.utcoffset() == timedelta(hours=1)
    assert summer.utcoffset() == timedelta(hours=2)
    assert winter == datetime(2026, 12, 1, 7, 30, tzinfo=UTC)


def test_now_is_stored_with_the_local_offset(central_european_time) -> None:
    moment = parse_time("now", now=datetime(2026, 12, 1, 8, 30))
    assert moment.tzinfo is not None
    assert moment == datetime(2026, 12, 1, 8, 30, tzinfo=timezone(timedelta(hours=1)))


def test_an_unreadable_time_names_the_accepted_forms() -> None:
    with pytest.raises(InputError) as caught:
        parse_time("yesterday 8am")
    assert str(caught.value) == (
        "time: yesterday 8am is not a time osmodose can read (accepted: ISO 8601 such as 2026-12-01T08:30+00:00 "
        "(no offset = this computer's local time), or now)"
    )


def test_labs_typed_with_units_are_read_as_a_check_reads_them() -> None:
    entry = parse_lab({"time": "2026-12-01T08:00Z", "sodium": "131 mEq/L", "glucose": "108 mg/dL", "bun": "14"})
    # Glucose 108 mg/dL / 180.16 g/mol = 5.995 mmol/L; BUN 14 mg/dL / 28.01 g/mol (N2) = 4.998 mmol/L urea.
    assert entry.sodium_mmol_l == 131.0
    assert entry.glucose_mmol_l == pytest.approx(5.995, abs=1e-3)
    assert entry.urea_mmol_l == pytest.approx(4.998, abs=1e-3)
    assert entry.entered == {"sodium": "131 mEq/L", "glucose": "108 mg/dL", "bun": "14"}


def test_a_lab_needs_sodium() -> None:
    with pytest.raises(InputError) as caught:
        parse_lab({"time": "2026-12-01T08:00Z", "glucose": "6"})
    assert str(caught.value) == "sodium: is required"


def test_an_implausible_lab_is_rejected_with_the_checks_words() -> None:
    with pytest.raises(InputError) as caught:
        parse_lab({"time": "2026-12-01T08:00Z", "sodium": "1400"})
    assert str(caught.value) == "sodium: 1400 is outside the plausible range (accepted: 90 to 200 mmol/L)"


def test_a_dose_is_read_in_ml_and_minutes(demo: Formulary) -> None:
    entry = parse_dose_entry(
        demo, {"time": "2026-12-01T08:00Z", "agent": "nacl-3", "volume": "0.25 L", "duration": "1h"}
    )
    assert (entry.agent_id, entry.volume_ml, entry.duration_min) == ("nacl-3", 250.0, 60.0)


def test_a_dose_of_an_unknown_agent_lists_the_formularys_agents(demo: Formulary) -> None:
    with pytest.raises(InputError) as caught:
        parse_dose_entry(demo, {"time": "2026-12-01T08:00Z", "agent": "nacl-5", "volume": "100"})
    assert str(caught.value) == (
        "agent: nacl-5 is not an agent of this formulary (accepted: one of: nacl-0.9, nacl-3, nacl-7.5, nacl-23.4, "
        "mannitol-20, bicarb-8.4, glucose-5, lactated-ringers)"
    )


def test_a_reading_accepts_kpa_and_computes_cpp() -> None:
    # 1 kPa = 7.50062 mmHg (definition of the mmHg: 133.322 Pa): 12 kPa = 90.007 mmHg.
    entry = parse_reading({"time": "2026-12-01T08:00Z", "map": "12 kPa", "icp": "20"})
    assert entry.map_mmhg == pytest.approx(90.007, abs=1e-3)
    assert entry.cpp_mmhg == pytest.approx(70.007, abs=1e-3)


def test_an_implausible_icp_is_rejected() -> None:
    with pytest.raises(InputError) as caught:
        parse_reading({"time": "2026-12-01T08:00Z", "map": "80", "icp": "250"})
    assert str(caught.value) == "icp: 250 is outside the plausible range (accepted: -10 to 150 mmHg)"


def test_the_watson_method_needs_a_height() -> None:
    with pytest.raises(InputError) as caught:
        parse_patient({"weight": "70", "age": "45", "sex": "male", "tbw-method": "watson"})
    assert str(caught.value) == "height: is required for the Watson formula (accepted: a height in cm, or fraction)"


def test_ethanol_is_kept_with_the_labs_and_counts_in_the_course_osmolality(demo: Formulary) -> None:
    # A course lab takes --ethanol as a check does: 92 mg/dL / 46.07 g/mol = 19.97 mmol/L (molar
    # factor, Nguyen MK et al. Front Med 2020), so the timeline's calculated osmolality is
    # 2 x 140 + 5 + 5 + 19.97 = 309.97 mOsm/kg, the figure `check` gives for the same labs.
    from osmodose.case.inputs import parse_check_request
    from osmodose.check.run import run_check
    from osmodose.course.timeline import build_timeline

    typed = {"sodium": "140", "glucose": "5", "urea": "5", "ethanol": "92 mg/dL"}
    entry = parse_lab({"time": "2026-12-01T08:00Z", **typed})
    assert entry.ethanol_mmol_l == pytest.approx(920 / 46.07)
    timeline = build_timeline(episode().with_entry(entry), demo)
    check = run_check(parse_check_request({"weight": "70", "age": "45", "sex": "male", **typed}), demo)
    assert timeline.labs.calculated_osmolality[0] == pytest.approx(280 + 10 + 920 / 46.07)
    assert timeline.labs.calculated_osmolality[0] == check.calculated_osmolality_mosm_kg
