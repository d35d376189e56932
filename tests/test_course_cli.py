"""`osmodose course`: a worked episode from the command line, plan, plot, and bad input."""

from __future__ import annotations

import json
import subprocess
import sys
import xml.etree.ElementTree as ET
from pathlib import Path

import pytest

from osmodose.cli.main import main
from tests.conftest import REPO_ROOT

DAY2 = "2026-12-02"


def course(*args: str) -> int:
    return main(["course", *[str(a) for a in args]])


@pytest.fixture
def worked(tmp_path: Path) -> Path:
    """A worked episode, numbers derived by hand in the test below (invented patient)."""
    path = tmp_path / "ep.json"
    steps = [
        ("new", "--weight", "70", "--age", "45", "--sex", "male", "--label", "worked example"),
        ("add-lab", "--time", "2026-12-01T08:00Z", "--sodium", "118", "--potassium", "3.9", "--glucose", "6",
         "--urea", "5", "--osmolality", "250"),
        ("add-dose", "--time", "2026-12-01T08:30Z", "--agent", "nacl-3", "--volume", "150", "--duration", "20"),
        ("add-dose", "--time", "2026-12-01T09:30Z", "--agent", "nacl-3", "--volume", "150", "--duration", "20"),
        ("add-reading", "--time", "2026-12-01T10:00Z", "--map", "80", "--icp", "25"),
        ("add-lab", "--time", "2026-12-01T14:00Z", "--sodium", "124", "--glucose", "6", "--urea", "5"),
        ("add-dose", "--time", "2026-12-01T16:00Z", "--agent", "mannitol-20", "--volume", "350", "--duration", "20"),
        ("add-lab", "--time", f"{DAY2}T06:00Z", "--sodium", "131", "--glucose", "6", "--urea", "5",
         "--osmolality", "290"),
        ("add-reading", "--time", f"{DAY2}T06:00Z", "--map", "85", "--icp", "18"),
    ]  # fmt: skip
    for name, *options in steps:
        assert course(name, path, *options) == 0
    return path


def test_the_worked_episode_shows_the_hand_derived_figures_and_findings(worked: Path, capsys) -> None:
    capsys.readouterr()
    assert course("show", worked, "--json") == 4  # a refusal: exit status 4, as for a check
    shown = json.loads(capsys.readouterr().out)
    # TBW 0.6 x 70 = 42 L (Adrogue HJ, Madias NE. N Engl J Med 2000).
    assert shown["patient"]["total_body_water_l"] == 42.0
    labs = shown["labs"]
    # Calculated osmolality 2 Na + glucose + urea (McMaster): 2 x 118 + 6 + 5 = 247; gap 250 - 247 = 3.
    assert (labs[0]["calculated_osmolality_mosm_kg"], labs[0]["osmolar_gap_mosm_kg"]) == (247.0, 3.0)
    # 2 x 131 + 6 + 5 = 273; gap 290 - 273 = 17; rise over the 22 h since 08:00: 131 - 118 = 13.
    assert (labs[2]["calculated_osmolality_mosm_kg"], labs[2]["osmolar_gap_mosm_kg"]) == (273.0, 17.0)
    # The first lab has no earlier lab within 24 h: its rise cannot be computed (null, not 0).
    assert [x["sodium_rise_24h_mmol_l"] for x in labs] == [None, 6.0, 13.0]
    assert labs[0]["sodium_fall_24h_mmol_l"] is None
    doses = shown["doses"]
    # 3 % NaCl (label 513 mmol/L), mass balance: 118 + 0.15 x 395 / 42.15 = 119.406, then + 0.15 x 393.594 / 42.15.
    # Printed to 0.1 mmol/L: 119.4057 and 120.8064.
    assert doses[0]["projected_sodium_after_mmol_l"] == 119.4
    assert doses[1]["projected_sodium_after_mmol_l"] == 120.8
    # 350 mL of 20 % mannitol = 70 g = 1 g/kg; no sodium projection for it.
    assert (doses[2]["mannitol_g"], doses[2]["projected_sodium_after_mmol_l"]) == (70.0, None)
    assert [r["cpp_mmhg"] for r in shown["readings"]] == [55.0, 67.0]  # 80 - 25, 85 - 18
    codes = {x["code"]: x["severity"] for x in shown["findings"]}
    assert codes == {
        "sodium-rise-24h": "refuse",  # 13 > 10 (Verbalis 2013; Spasovski 2014)
        "osmolar-gap-rising": "warn",  # 17 - 3 = 14 > 10 across the mannitol dose
        # the latest gap 17 after mannitol: above 10 (published upper normal, McMaster), not above the
        # common hold threshold of 20 (common practice)
        "osmolar-gap-high": "warn",
        "icp-high": "warn",  # 25 > 22 (Carney 2017)
        "cpp-low": "warn",  # 55 < 60 (Carney 2017)
        # 118 -> 124 after 2 x 150 mL of 3 % (513): apparent TBW (0.3 x 513 - 124 x 0.3) / (124 - 118) = 19.45 L
        # (the balance solved for TBW, Barsoum & Levine 2002), 46 % of 42 L: below 60 %.
        "apparent-tbw-low": "warn",
    }
    assert doses[0]["apparent_tbw_l"] == doses[1]["apparent_tbw_l"] == 19.5  # (153.9 - 37.2) / 6 = 19.45, to 0.1 L
    assert shown["apparent_tbw_l"] == 19.5  # 19.45, to 0.1 L as declared
    assert doses[2]["apparent_tbw_l"] is None  # mannitol between the second and third lab: not in the balance
    assert shown["caution"].startswith("Decision support only")


def test_show_prints_the_timeline_table(worked: Path, capsys) -> None:
    capsys.readouterr()
    course("show", worked)
    out = capsys.readouterr().out
    assert out.startswith("osmodose course  REFUSE: a hard limit is crossed; no further dose without review\n")
    assert "time                    id  entry    details\n" in out
    assert (
        "2026-12-01T08:30+00:00  D1  dose     nacl-3 150 mL over 20 min  -> projected Na 119.4  "
        "apparent TBW 19.5 L (46 %)  ICP n/a -> 25\n" in out
    )
    assert "apparent total body water: 19.5 L, 46 % of the estimated 42.0 L" in out
    # Past a limit, a value says so in words beside it: ICP 25 > 22, CPP 55 < 60 (Carney 2017).
    assert "2026-12-01T10:00+00:00  R1  reading  MAP 80  ICP 25 HIGH  CPP 55 LOW\n" in out
    assert (
        "2026-12-01T16:00+00:00  D3  dose     mannitol-20 350 mL over 20 min  70.0 g  in 24 h 1.00 g/kg  "
        "(no projection)\n" in out
    )
    # 24 h rise 13 from 118 (the rise limits apply below 135): above the refuse limit of 10; gap 17 after
    # mannitol is above the warn limit of 10.
    assert (
        f"{DAY2}T06:00+00:00  L3  lab      Na 131.0  glucose 6.0  urea 5.0  osm 290.0  calc 273.0  gap 17.0 HIGH  "
        "24 h rise +13.0 TOO HIGH\n" in out
    )
    assert "HIGH/LOW: past a warn limit; TOO HIGH/TOO LOW: past a refuse limit (the formulary's limits)\n" in out
    assert "latest sodium: 131.0 mmol/L at 2026-12-02T06:00+00:00 (no dose since)\n" in out


def test_plan_from_the_worked_episode(worked: Path, capsys) -> None:
    capsys.readouterr()
    code = course("plan", worked, "--agent", "nacl-3", "--volume", "100", "--time", f"{DAY2}T07:00Z", "--json")
    planned = json.loads(capsys.readouterr().out)
    # With the estimated TBW: 131 + 0.1 x (513 - 131) / 42.1 = 131 + 38.2 / 42.1 = 131.907.  With the apparent
    # TBW of 19.45 L (118 -> 124 after 300 mL of 3 %): 131 + 38.2 / 19.55 = 132.954, the worse: judged on it.
    # Lowest in the 24 h before: 118 -> rise 15.0 > 10.
    assert planned["projected_sodium_before_mmol_l"] == 131.0
    assert planned["projection_by_tbw"]["estimated"]["projected_sodium_after_mmol_l"] == 131.9  # 131.9074, to 0.1
    assert planned["projected_sodium_after_mmol_l"] == round(131 + 38.2 / (19.45 + 0.1), 1)
    assert planned["judged_on"] == "apparent"
    assert {x["code"] for x in planned["findings"]} == {"projected-rise-24h", "apparent-tbw-low"}
    assert planned["status"] == "refuse" and code == 4
    assert planned["check"]["dose"]["volume_ml"] == 100.0
    # Measured 118 -> 131 within 24 h, past the limit of 10: back to 128 with 5 % glucose (Na 0) by the same
    # balance, with the smaller TBW (19.45 L): V = 3 x 19.45 / (131 - 3) = 0.456 L.
    rescue = planned["overcorrection_rescue"]
    assert (rescue["target_sodium_mmol_l"], rescue["from_sodium_mmol_l"]) == (128.0, 131.0)
    assert rescue["volumes"] == [{"agent": "glucose-5", "volume_ml": round(3 * 19.45 / 128 * 1000, 1)}]


def test_plan_text_ends_with_the_checks_report(worked: Path, capsys) -> None:
    capsys.readouterr()
    course("plan", worked, "--agent", "nacl-3", "--volume", "100", "--time", f"{DAY2}T07:00Z")
    out = capsys.readouterr().out
    assert "projected sodium after this dose: 133.0 mmol/L\n" in out
    assert "  with the estimated total body water (42.0 L): 131.0 -> 131.9 mmol/L\n" in out
    assert "  with the apparent total body water (19.5 L): 131.0 -> 133.0 mmol/L  <- judged\n" in out
    assert "  back to 128.0 mmol/L from 131.0 (TBW 19.5 L): glucose-5 456 mL\n" in out
    assert "the planned dose, checked from the projected sodium:\n\nosmodose check  OK" in out
    assert out.endswith("licensed clinical judgement before giving anything.\n")


PNG_MAGIC = b"\x89PNG\r\n\x1a\n"


def test_plot_writes_a_png_and_an_svg(worked: Path, tmp_path: Path) -> None:
    png, svg = tmp_path / "course.png", tmp_path / "course.svg"
    assert course("plot", worked, "--out", png) == 0
    assert course("plot", worked, "--out", svg) == 0
    assert png.read_bytes()[:8] == PNG_MAGIC
    assert ET.parse(svg).getroot().tag == "{http://www.w3.org/2000/svg}svg"
    assert "sodium (mmol/L)" in svg.read_text(encoding="utf-8")  # text kept as text (svg.fonttype none)


def test_plot_to_another_format_is_refused_before_any_work(worked: Path, tmp_path: Path, capsys) -> None:
    out = tmp_path / "course.pdf"
    assert course("plot", worked, "--out", out) == 2
    assert capsys.readouterr().err == (
        f"osmodose: out: {out} is not a file name osmodose can plot to (accepted: a name ending in .png or .svg)\n"
    )
    assert not out.exists()


def test_plot_of_an_empty_episode_says_what_it_needs(tmp_path: Path, capsys) -> None:
    path = tmp_path / "ep.json"
    course("new", path, "--weight", "70", "--age", "45", "--sex", "male")
    assert course("plot", path, "--out", tmp_path / "x.png") == 2
    assert capsys.readouterr().err == "osmodose: plot: needs at least one lab or reading in the episode\n"


def test_add_lab_with_an_unreadable_time_changes_nothing(worked: Path, capsys) -> None:
    before = worked.read_bytes()
    assert course("add-lab", worked, "--time", "08:00 tomorrow", "--sodium", "130") == 2
    assert capsys.readouterr().err.startswith("osmodose: time: 08:00 tomorrow is not a time osmodose can read")
    assert worked.read_bytes() == before


def test_registering_course_imports_neither_the_course_modules_nor_matplotlib() -> None:
    code = (
        "import sys; from osmodose.cli.main import build_parser; build_parser(); "
        "print(any(m == 'matplotlib' or m.startswith('osmodose.course') for m in sys.modules))"
    )
    done = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, cwd=REPO_ROOT, check=True, timeout=60
    )
    assert done.stdout.strip() == "False"


def test_plot_into_a_missing_folder_is_one_line_not_a_traceback(worked: Path, tmp_path: Path, capsys) -> None:
    out = tmp_path / "no-such-folder" / "x.png"
    assert course("plot", worked, "--out", out) == 2
    assert capsys.readouterr().err == f"osmodose: out: {out} cannot be written: No such file or directory\n"


def test_the_plot_series_are_plain_floats_for_a_terminal_widget(demo) -> None:
    from osmodose.course.series import course_series
    from tests.course_build import dose, episode, lab, reading

    ep = episode(labs=[lab(0, 118), lab(4, 121)], doses=[dose(1, "nacl-3", 150, 30)], readings=[reading(2, 80, 25)])
    series = course_series(ep, demo)
    assert series.lab_hours == (0.0, 4.0)
    assert series.sodium == (118.0, 121.0)
    # From 118 through the dose ending at 1.5 h: 118 + 0.15 x (513 - 118) / 42.15 = 119.4057.
    (hours, sodium), (hours2, sodium2) = series.projected
    assert hours == (0.0, 1.5) and sodium[1] == pytest.approx(119.4057, abs=1e-4)
    assert (hours2, sodium2) == ((4.0,), (121.0,))
    assert (series.reading_hours, series.icp, series.cpp) == ((2.0,), (25.0,), (55.0,))
    assert (series.sodium_warn, series.sodium_refuse, series.icp_treat_above, series.cpp_target_min) == (
        155.0,
        160.0,
        22.0,
        60.0,
    )
    assert all(type(x) is float for x in (*series.lab_hours, *series.sodium, *hours, *sodium, *series.cpp))
