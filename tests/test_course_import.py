"""`course import` and `course add-lab --labs`: a FHIR file into an episode, every entry once.

The resources are built by tests/fhir_build.py in the shape of the R4 specification's examples;
the patient, values and medication codes are invented test data.
"""

from __future__ import annotations

import contextlib
import io
import json
from pathlib import Path

import pytest

from osmodose.cli.main import main
from osmodose.course.store import load_episode
from osmodose.errors import FormularyProblems
from osmodose.formulary import demo_formulary_path, load_formulary
from tests.fhir_build import STOCK, administration, bundle, morning_labs, observation, write

LATER = "2026-12-01T14:30:00+01:00"


def run(*args: str) -> tuple[int, str, str]:
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        code = main(list(args))
    return code, out.getvalue(), err.getvalue()


def coded_formulary(tmp_path: Path, codes: str = f'["{STOCK}|NACL3-250"]') -> Path:
    """The demo formulary with medication codes on its 3 % saline."""
    text = demo_formulary_path().read_text(encoding="utf-8")
    text = text.replace('id = "nacl-3"\n', f'id = "nacl-3"\ncodes = {codes}\n', 1)
    path = tmp_path / "unit.toml"
    path.write_text(text, encoding="utf-8")
    return path


def course(tmp_path: Path) -> Path:
    path = tmp_path / "ep.json"
    assert run("course", "new", str(path), "--weight", "65", "--age", "50", "--sex", "female")[0] == 0
    return path


def course_bundle(tmp_path: Path) -> Path:
    resources = [
        *morning_labs(),
        observation("na-4", "2951-2", 133, "mmol/L", LATER),
        observation("k-4", "2823-3", 4.1, "mmol/L", LATER),
        observation("map-1", "8478-0", 85, "mm[Hg]", "2026-12-01T09:00:00+01:00"),
        observation("icp-1", "60956-0", 24, "mm[Hg]", "2026-12-01T09:00:00+01:00"),
        observation("glu-9", "2345-7", 110, "mg/dL", "2026-12-01T11:00:00+01:00"),  # no sodium at 11:00
        administration("ma-1", "NACL3-250", "2026-12-01T09:00:00+01:00", "2026-12-01T09:30:00+01:00", 250),
        administration("ma-2", "MYSTERY-1", "2026-12-01T10:00:00+01:00", None, 100),
        administration("ma-3", "NACL3-250", "2026-12-01T12:00:00+01:00", None, 250, status="not-done"),
    ]
    return write(tmp_path / "bundle.json", bundle(*resources))


def test_an_import_fills_the_episode_and_a_second_import_adds_nothing(tmp_path: Path) -> None:
    episode_path = course(tmp_path)
    formulary = coded_formulary(tmp_path)
    bundle_path = course_bundle(tmp_path)
    code, out, err = run("course", "import", str(episode_path), str(bundle_path), "--formulary", str(formulary))
    assert code == 0, err
    assert out.splitlines()[-1] == (
        f"imported from {bundle_path} into {episode_path}: 3 lab entries, 1 reading, 1 dose"
    )
    episode = load_episode(episode_path)
    assert [lab.sodium_mmol_l for lab in episode.labs] == [128.0, 130.0, 133.0]
    morning = episode.labs[1]
    assert morning.sources == {
        "sodium": "Observation/na-2",
        "potassium": "Observation/k-1",
        "glucose": "Observation/glu-1",
        "bun": "Observation/bun-1",
        "osmolality": "Observation/osm-1",
    }
    assert morning.entered["sodium"] == "130 meq/L"
    # BUN 14 mg/dL of nitrogen is urea 14 / 28.014 x 10 = 4.998 mmol/L (two N per urea; N 14.007, CIAAW).
    assert morning.urea_mmol_l == pytest.approx(140 / 28.014, rel=1e-3)
    (reading,) = episode.readings
    assert (reading.map_mmhg, reading.icp_mmhg, reading.cpp_mmhg) == (85.0, 24.0, 61.0)
    (dose,) = episode.doses
    assert (dose.agent_id, dose.volume_ml, dose.duration_min, dose.source) == (
        "nacl-3",
        250.0,
        30.0,
        "MedicationAdministration/ma-1",
    )
    assert (
        "not imported: Observation/wt-1 (LOINC 29463-7, weight): the patient's weight is kept by course new; "
        "not imported" in out
    )
    assert (
        "not imported: MedicationAdministration/ma-2: medication http://example.org/fhir/stock-codes|MYSTERY-1 is not "
        "mapped to an agent (codes in the formulary); not imported"
    ) in out
    assert "not imported: MedicationAdministration/ma-3: status not-done, not completed; not imported" in out
    assert (
        "not imported: Observation/glu-9 (LOINC 2345-7, glucose): no final sodium at 2026-12-01 11:00 +01:00, and a "
        "lab entry needs one; not imported"
    ) in out

    before = episode_path.read_bytes()
    code, out, _ = run("course", "import", str(episode_path), str(bundle_path), "--formulary", str(formulary))
    assert code == 0
    assert out.splitlines()[-1] == (
        f"imported from {bundle_path} into {episode_path}: 0 lab entries, 0 readings, 0 doses; "
        "11 already in the episode"
    )
    assert episode_path.read_bytes() == before


def test_an_observation_changed_since_its_import_is_reported_not_applied(tmp_path: Path) -> None:
    episode_path = course(tmp_path)
    first = write(tmp_path / "a.json", bundle(observation("na-1", "2951-2", 128, "mmol/L", LATER)))
    assert run("course", "import", str(episode_path), str(first))[0] == 0
    corrected = write(
        tmp_path / "b.json", bundle(observation("na-1", "2951-2", 127, "mmol/L", LATER, status="corrected"))
    )
    code, out, _ = run("course", "import", str(episode_path), str(corrected))
    assert code == 0
    assert (
        "not imported: Observation/na-1 (LOINC 2951-2, sodium): now 127 mmol/L, changed since it was imported; the "
        "episode keeps the value imported first: check it"
    ) in out
    assert [lab.sodium_mmol_l for lab in load_episode(episode_path).labs] == [128.0]


def test_labs_at_a_time_the_episode_already_has_are_not_merged(tmp_path: Path) -> None:
    episode_path = course(tmp_path)
    assert run("course", "add-lab", str(episode_path), "--time", LATER, "--sodium", "133")[0] == 0
    path = write(tmp_path / "b.json", bundle(observation("k-4", "2823-3", 4.1, "mmol/L", LATER)))
    code, out, _ = run("course", "import", str(episode_path), str(path))
    assert code == 0
    assert (
        "not imported: Observation/k-4 (LOINC 2823-3, potassium): the episode already has labs at "
        "2026-12-01 14:30 +01:00; not merged (entries are never changed)"
    ) in out


def test_add_lab_takes_the_newest_labs_at_the_sodiums_time(tmp_path: Path) -> None:
    episode_path = course(tmp_path)
    resources = [*morning_labs(), observation("k-5", "2823-3", 4.4, "mmol/L", "2026-12-01T09:00:00+01:00")]
    path = write(tmp_path / "labs.json", bundle(*resources))
    code, out, err = run("course", "add-lab", str(episode_path), "--labs", str(path), "--glucose", "7")
    assert code == 0, err
    (lab,) = load_episode(episode_path).labs
    assert lab.time.isoformat() == "2026-12-01T08:30:00+01:00"
    assert (lab.sodium_mmol_l, lab.glucose_mmol_l, lab.potassium_mmol_l) == (130.0, 7.0, None)
    assert lab.sources["sodium"] == "Observation/na-2" and "glucose" not in lab.sources
    assert (
        "not used: Observation/k-5 (potassium): drawn at 2026-12-01 09:00 +01:00, not with the entry at "
        "2026-12-01 08:30 +01:00; not added (course import adds each time)"
    ) in out


def test_add_lab_without_a_file_still_requires_time_and_sodium(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    episode_path = course(tmp_path)
    with pytest.raises(SystemExit):
        main(["course", "add-lab", str(episode_path), "--sodium", "130"])
    assert "the following arguments are required: --time" in capsys.readouterr().err


@pytest.mark.parametrize(
    ("codes", "problem"),
    [
        ('["NACL3"]', '\'NACL3\' is not "system|code" (e.g. "http://example.org/stock|NACL3")'),
        ('["a|b", "a|b"]', None),
    ],
)
def test_medication_codes_in_the_formulary_are_checked(tmp_path: Path, codes: str, problem: str | None) -> None:
    path = coded_formulary(tmp_path, codes)
    if problem is None:
        assert load_formulary(path).agent("nacl-3").codes == ("a|b", "a|b")
        return
    with pytest.raises(FormularyProblems) as caught:
        load_formulary(path)
    assert (caught.value.key_path, caught.value.problem) == ("agents[2].codes[1]", problem)


def test_one_code_may_not_name_two_agents(tmp_path: Path) -> None:
    path = coded_formulary(tmp_path)
    text = path.read_text(encoding="utf-8").replace(
        'id = "nacl-7.5"\n', f'id = "nacl-7.5"\ncodes = ["{STOCK}|NACL3-250"]\n'
    )
    path.write_text(text, encoding="utf-8")
    with pytest.raises(FormularyProblems) as caught:
        load_formulary(path)
    assert caught.value.problem == f"'{STOCK}|NACL3-250' already names agents[2]: one code, one agent"


def test_the_import_json_of_course_show_keeps_working(tmp_path: Path) -> None:
    episode_path = course(tmp_path)
    formulary = str(coded_formulary(tmp_path))
    assert run("course", "import", str(episode_path), str(course_bundle(tmp_path)), "--formulary", formulary)[0] == 0
    code, out, _ = run("course", "show", str(episode_path), "--json", "--formulary", formulary)
    assert code in (0, 3, 4)
    shown = json.loads(out)
    assert shown["format_version"] == 5  # after the FHIR sources (3), urine outputs (4) and entry ids (5)
    assert shown["doses"][0]["source"] == "MedicationAdministration/ma-1"
