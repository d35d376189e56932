"""`plan` once the latest measured osmolality predates doses given since, and the osmolar gap after mannitol.

Calculated osmolality 2 Na + glucose + urea (McMaster Textbook of Internal Medicine); osmolality warn above 310
(common practice), refuse above 320 (Hinson HE et al. J Intensive Care Med 2013); osmolar gap warn above 10
(published upper normal, McMaster), refuse above 20 (common practice: a common hold threshold for mannitol).
"""

from __future__ import annotations

import pytest

from osmodose.cli.main import main
from osmodose.course.plan import plan_dose
from osmodose.formulary import Formulary
from tests.course_build import at, dose, episode, lab

# 70 kg man, TBW 42 L.  Lab Na 150, glucose 6, urea 5: calculated 2 x 150 + 6 + 5 = 311; measured 316, gap 5.
# Two doses of 23.4 % NaCl 30 mL (demo formulary 4000 mmol/L), mass balance (Chen S et al. Kidney360 2021):
#   150 + 0.03 x (4000 - 150) / 42.03 = 150 + 2.748037 = 152.748037
#   152.748037 + 0.03 x (4000 - 152.748037) / 42.03 = 152.748037 + 2.746076 = 155.494113
# Calculated from the projected sodium: 2 x 155.494113 + 11 = 321.99; measured carried forward:
#   316 + 2 x 5.494113 = 326.99 mOsm/kg (each mmol/L of sodium counts twice in 2 Na + glucose + urea).
PROJECTED = 155.494113


def _review_episode():
    return episode(
        labs=[lab(0, 150, glucose_mmol_l=6, urea_mmol_l=5, osmolality_mosm_kg=316)],
        doses=[dose(1, "nacl-23.4", 30), dose(2, "nacl-23.4", 30)],
    )


def _plan(ep, formulary: Formulary, hours: float = 3, **order: str):
    order = order or {"agent": "mannitol-20", "dose": "1g/kg"}
    return plan_dose(ep, formulary, {**order, "time": at(hours).isoformat()})


def test_plan_judges_the_osmolality_carried_through_the_doses_not_the_stale_measured_one(demo: Formulary) -> None:
    plan = _plan(_review_episode(), demo)
    assert plan.projection.sodium_now == pytest.approx(PROJECTED, abs=1e-5)
    # The check no longer sets the old 316 against 321.99 (an artefactual gap of -6): no gap at all.
    assert plan.check.osmolar_gap_mosm_kg is None
    assert plan.check.calculated_osmolality_mosm_kg == pytest.approx(2 * PROJECTED + 11)
    found = {x.code: x for x in plan.findings}["projected-osmolality-high"]
    assert (found.severity, found.limit) == ("refuse", 320.0)
    assert found.value == pytest.approx(316 + 2 * (PROJECTED - 150))
    assert found.message == (
        "osmolality now about 327.0 mOsm/kg (measured 316 at 2026-12-01T08:00+00:00, 3.0 h old, + 2 x 5.5 "
        "sodium change since) is above the refuse limit of 320 mOsm/kg"
    )
    assert plan.status == "refuse"
    assert (
        "Osmolar gap n/a: the latest measured osmolality, 316 mOsm/kg at 2026-12-01T08:00+00:00 (3.0 h old), "
        "predates the 2 doses since the latest lab, so it is not set against the osmolality calculated from the "
        "sodium now; osmolality is judged as the larger of the calculated (322.0) and 316 + 2 x 5.5 = 327.0 mOsm/kg. "
        "Re-measure before dosing on it."
    ) in plan.notes


def test_the_command_line_plan_shows_the_gap_as_n_a(demo: Formulary, tmp_path, capsys) -> None:
    path = tmp_path / "ep.json"
    steps = [
        ["new", path, "--weight", "70", "--age", "45", "--sex", "male"],
        ["add-lab", path, "--time", "2026-12-01T08:00Z", "--sodium", "150", "--glucose", "6", "--urea", "5",
         "--osmolality", "316"],
        ["add-dose", path, "--time", "2026-12-01T09:00Z", "--agent", "nacl-23.4", "--volume", "30"],
        ["add-dose", path, "--time", "2026-12-01T10:00Z", "--agent", "nacl-23.4", "--volume", "30"],
    ]  # fmt: skip
    for step in steps:
        assert main(["course", *map(str, step)]) == 0
    capsys.readouterr()
    code = main(
        ["course", "plan", str(path), "--agent", "mannitol-20", "--dose", "1g/kg", "--time", "2026-12-01T11:00Z"]
    )
    out = capsys.readouterr().out
    assert code == 4
    assert "osmolar gap: n/a" in out
    assert "projected-osmolality-high" in out


def test_with_no_dose_since_the_measured_osmolality_is_judged_as_measured(demo: Formulary) -> None:
    ep = episode(labs=[lab(0, 150, glucose_mmol_l=6, urea_mmol_l=5, osmolality_mosm_kg=316)])
    plan = _plan(ep, demo, 1)
    assert plan.check.osmolar_gap_mosm_kg == 5.0  # 316 - 311
    assert "projected-osmolality-high" not in {x.code for x in plan.findings}


def test_mannitol_since_the_latest_osmolality_asks_for_it_to_be_measured_again(demo: Formulary) -> None:
    # Mannitol at 1 h after the 0 h osmolality: neither the measured nor the calculated figure shows it.
    ep = episode(labs=[lab(0, 140, glucose_mmol_l=6, urea_mmol_l=5, osmolality_mosm_kg=300)],
                 doses=[dose(1, "mannitol-20", 350)])  # fmt: skip
    found = {x.code: x for x in _plan(ep, demo, 5).findings}["osmolality-not-remeasured"]
    assert found.severity == "warn"
    assert found.message == (
        "1 mannitol dose (the latest at 2026-12-01T09:00+00:00) given since the latest measured osmolality "
        "(300 mOsm/kg at 2026-12-01T08:00+00:00): the osmolality and the osmolar gap do not show it; "
        "re-measure osmolality before another dose"
    )
    # Measured again after the mannitol: nothing to ask.
    again = episode(labs=[*ep.labs, lab(4, 141, glucose_mmol_l=6, urea_mmol_l=5, osmolality_mosm_kg=305)],
                    doses=ep.doses)  # fmt: skip
    assert "osmolality-not-remeasured" not in {x.code for x in _plan(again, demo, 5).findings}


def test_mannitol_with_no_osmolality_ever_measured_is_warned(demo: Formulary) -> None:
    ep = episode(labs=[lab(0, 140, glucose_mmol_l=6, urea_mmol_l=5)], doses=[dose(1, "mannitol-20", 350)])
    found = {x.code: x for x in _plan(ep, demo, 2).findings}["osmolality-not-remeasured"]
    assert "given and no osmolality has been measured" in found.message


def test_a_mannitol_plan_judges_the_gap_measured_at_the_latest_lab(demo: Formulary) -> None:
    # 2 x 140 + 6 + 5 = 291; measured 316: gap 25 > 20 refuse.  A 3 % dose since moves sodium, so the
    # check has no gap; the plan judges the one measured.
    ep = episode(labs=[lab(0, 140, glucose_mmol_l=6, urea_mmol_l=5, osmolality_mosm_kg=316)],
                 doses=[dose(1, "nacl-3", 100)])  # fmt: skip
    found = {x.code: x for x in _plan(ep, demo, 2).findings}["osmolar-gap-high"]
    assert (found.severity, found.value, found.limit) == ("refuse", 25.0, 20.0)
