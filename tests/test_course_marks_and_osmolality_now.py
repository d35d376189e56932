"""The course cannot be misread: values past a limit say so in words, and a measured osmolality counts.

Episodes are invented (demo data).  Limits are the demo formulary's: osmolality warn 310 and refuse
320 mOsm/kg (Hinson HE et al. J Intensive Care Med 2013: hold mannitol above 320), ICP 22 and CPP 60
mmHg (Carney N et al. Neurosurgery 2017), labs older than 6 h are stale (common practice).
Calculated osmolality is 2 Na + glucose + urea (McMaster Textbook of Internal Medicine).
"""

from __future__ import annotations

from pathlib import Path

from osmodose.app.course_view import legend_text, open_course
from osmodose.course.marks import LEGEND
from osmodose.course.plan import plan_dose
from osmodose.course.plot import write_plot
from osmodose.course.report import render_review_text, review, timeline_table
from osmodose.course.series import course_series
from osmodose.course.store import save_episode
from osmodose.formulary import Formulary
from tests.course_build import at, dose, episode, lab, reading


def _issue_episode(hours_after: float = 3.0):
    """Measured 324 then 321 mOsm/kg (above the refuse limit), then a lab with no measured osmolality.

    The third lab: 2 x 150 + 6 + 5 + ... = calculated 316.6 (Na 152.8, glucose 6, urea 5).
    """
    return episode(
        labs=[
            lab(0, 150, glucose_mmol_l=6, urea_mmol_l=5, osmolality_mosm_kg=324),
            lab(4, 151, glucose_mmol_l=6, urea_mmol_l=5, osmolality_mosm_kg=321),
            lab(4 + hours_after, 152.8, glucose_mmol_l=6, urea_mmol_l=5),
        ],
        doses=[dose(1, "mannitol-20", 250, 20)],
        readings=[reading(2, 75, 22), reading(3, 75, 23)],
    )


def test_the_status_is_judged_on_the_latest_measured_osmolality_within_its_age_limit(demo: Formulary) -> None:
    result = review(_issue_episode(hours_after=3.0), demo)
    found = {x.code: x for x in result.findings}["osmolality-high"]
    # 321 measured 3 h before the latest lab (within 6 h): refused, not a warn judged on the calculated 316.6.
    assert result.status == "refuse"
    assert (found.severity, found.value, found.limit) == ("refuse", 321.0, 320.0)
    assert found.message == (
        "measured osmolality 321.0 mOsm/kg at 2026-12-01T12:00+00:00 (the latest measured, 3.0 h old at "
        "2026-12-01T15:00+00:00) is above the refuse limit of 320 mOsm/kg (3 of 3 labs crossing a limit)"
    )


def test_a_measured_osmolality_older_than_the_age_limit_is_named_with_its_age(demo: Formulary) -> None:
    result = review(_issue_episode(hours_after=9.0), demo)
    found = {x.code: x for x in result.findings}["osmolality-high"]
    # 9 h after 321 was measured, only the calculated 316.6 is judged: a warn, saying why, and to re-measure.
    assert (found.severity, found.value) == ("warn", 316.6)
    assert found.message == (
        "calculated osmolality 316.6 mOsm/kg at 2026-12-01T21:00+00:00 (the latest) is above the warn limit of "
        "310 mOsm/kg (3 of 3 labs crossing a limit); the latest measured (321.0 at 2026-12-01T12:00+00:00) is "
        "9.0 h old at 2026-12-01T21:00+00:00, older than the 6 h limit: re-measure"
    )


def test_values_past_a_limit_are_marked_in_words_in_the_timeline(demo: Formulary) -> None:
    result = review(_issue_episode(), demo)
    rows = {(row.time[11:16], row.kind): row for row in timeline_table(result)}
    first = rows[("08:00", "lab")]
    # The gap before any mannitol is shown but not judged (the gap limits are mannitol's).
    assert first.text == "Na 150.0  glucose 6.0  urea 5.0  osm 324.0 TOO HIGH  calc 311.0  gap 13.0"
    # 321 - 313 = 8: the gap after mannitol is within the demo's warn limit of 10 (McMaster: normal below 10).
    assert rows[("12:00", "lab")].text == (
        "Na 151.0  glucose 6.0  urea 5.0  osm 321.0 TOO HIGH  calc 313.0  gap 8.0  24 h rise +1.0"
    )
    # No measured osmolality: the calculated one is judged, and marked: 2 x 152.8 + 11 = 316.6 > 310.
    assert "calc 316.6 HIGH" in rows[("15:00", "lab")].text
    assert rows[("11:00", "reading")].text == "MAP 75  ICP 23 HIGH  CPP 52 LOW"
    assert rows[("10:00", "reading")].text == "MAP 75  ICP 22  CPP 53 LOW"  # 22 is at, not above, 22
    marked = rows[("08:00", "lab")].cells[3]
    assert (marked.name, marked.value, marked.mark, marked.severity) == ("osm", "324.0", "TOO HIGH", "refuse")
    assert first.severity == "refuse"
    assert LEGEND in render_review_text(result, "ep.json").splitlines()


def test_the_app_course_state_carries_the_marked_cells(demo: Formulary, tmp_path: Path) -> None:
    path = tmp_path / "ep.json"
    save_episode(_issue_episode(), path, create=True)
    state = open_course(path, demo)
    assert [row.text for row in state.table] == [text for _, _, text, _ in state.rows]
    assert any(cell.mark == "TOO HIGH" for row in state.table for cell in row.cells)
    assert legend_text(state) == LEGEND


def test_the_plan_carries_the_latest_measured_osmolality_when_the_latest_lab_has_none(demo: Formulary) -> None:
    # Planned at 16:00: the latest lab (15:00) has no measured osmolality; 321 at 12:00 is 4 h old.
    # Carried: 321 + 2 x (152.8 - 151) = 324.6 mOsm/kg, above the refuse limit of 320.
    plan = plan_dose(_issue_episode(), demo, {"agent": "mannitol-20", "dose": "0.5g/kg", "time": at(8).isoformat()})
    found = {x.code: x for x in plan.findings}["projected-osmolality-high"]
    assert (found.severity, round(found.value, 1)) == ("refuse", 324.6)
    assert found.message == (
        "osmolality now about 324.6 mOsm/kg (measured 321 at 2026-12-01T12:00+00:00, 4.0 h old, + 2 x 1.8 sodium "
        "change since) is above the refuse limit of 320 mOsm/kg"
    )
    assert plan.status == "refuse"
    assert plan.check.osmolar_gap_mosm_kg is None


def test_the_plan_says_when_the_latest_measured_osmolality_is_too_old_to_judge(demo: Formulary) -> None:
    plan = plan_dose(
        _issue_episode(hours_after=9.0), demo, {"agent": "nacl-3", "volume": "100", "time": at(13.5).isoformat()}
    )
    assert (
        "The latest measured osmolality, 321 mOsm/kg at 2026-12-01T12:00+00:00, is 9.5 h old, older than the 6 h "
        "limit: not judged; the calculated osmolality is. Re-measure before dosing on it."
    ) in plan.notes


def test_the_plot_labels_each_dose_and_adds_the_osmolality_panel_after_mannitol(
    demo: Formulary, tmp_path: Path
) -> None:
    series = course_series(_issue_episode(), demo)
    assert series.mannitol_given and series.dose_labels == ("mannitol-20 250 mL",)
    assert series.measured_osmolality[:2] == (324.0, 321.0)
    out = tmp_path / "plot.svg"
    write_plot(series, out, "course of therapy")
    svg = out.read_text(encoding="utf-8")
    for text in ("mannitol-20 250 mL", "osmolality (mOsm/kg)", "osmolar gap (mOsm/kg)", "DEMO formulary"):
        assert text in svg, text
    caution = svg[svg.index("DEMO formulary") - 400 : svg.index("DEMO formulary")]
    assert "font-size: 9px" in caution  # the caution at 9 points, readable on paper (it was 6)
