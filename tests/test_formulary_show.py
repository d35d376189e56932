"""`osmodose formulary show` and the summary rows behind it: the derived figures a checker reads."""

from __future__ import annotations

import json
import re
from pathlib import Path

import pytest

from osmodose.cli.main import main
from osmodose.formulary import Formulary, load_formulary
from osmodose.formulary.limits import LIMIT_SPECS
from osmodose.formulary.summary import AGENT_COLUMNS, agent_cells, agent_rows, limit_rows
from tests.formulary_files import write


def show_lines(capsys: pytest.CaptureFixture[str], *args: str) -> list[str]:
    assert main(["formulary", "show", *args]) == 0
    return capsys.readouterr().out.splitlines()


def cells_of(lines: list[str], agent_id: str) -> list[str]:
    """The cells of every table line starting with the agent id (columns are 2+ spaces apart)."""
    return [re.split(r"\s{2,}", line) for line in lines if line.startswith(agent_id + " ")]


def test_show_of_the_demo_prints_three_percent_saline_figures(capsys: pytest.CaptureFixture[str]) -> None:
    lines = show_lines(capsys)
    figures, stock = cells_of(lines, "nacl-3")
    # 3 % NaCl: 513 mmol/L Na, 1027 mOsm/L (product labels); 0.513 mmol/mL; 30 g/L = 0.03 g/mL.
    assert figures == ["nacl-3", "3% w/v", "513", "0.513", "1027", "0.03", "peripheral or central"]
    assert stock == [
        "nacl-3",
        "Sodium chloride 3 % 250 mL (demo stock)",
        "250 mL, 500 mL",
        "warn > 5 mL/kg; refuse > 10 mL/kg",
        "none",
    ]
    assert lines[0] == 'formulary "Larkspur Point 7N neuro ICU (fictional demo unit)" version "2026-12-demo"'
    assert lines[-1].startswith("Decision support only")


def test_show_names_where_each_limit_comes_from(capsys: pytest.CaptureFixture[str]) -> None:
    lines = show_lines(capsys)
    by_name = {cells[0]: cells[1:] for cells in (re.split(r"\s{2,}", line) for line in lines) if len(cells) == 3}
    assert by_name["sodium_refuse"] == ["160 mmol/L", "formulary file"]
    assert by_name["osmolality_warn"] == [
        "310 mOsm/kg",
        "default: common practice: inside the 300-320 target (Hinson 2013), no single source",
    ]
    assert by_name["dose_tolerance"] == ["10 %", "default: common practice (no single source)"]
    assert by_name["mannitol_24h_max"] == ["not set", "default: no default: set by the unit's protocol"]


DERIVED_FILE = """\
[formulary]
name = "Derivation check (invented)"
version = "1"

[[agents]]
id = "nacl-3"
label = "Sodium chloride 3 %"
solute = "sodium chloride"
concentration = "3% w/v"
route = "central-only"

[[agents]]
id = "nacl-23.4"
label = "Sodium chloride 23.4 %"
solute = "sodium chloride"
concentration = "23.4% w/v"
route = "central-only"

[[agents]]
id = "mannitol-20"
label = "Mannitol 20 %"
solute = "mannitol"
concentration = "20% w/v"
route = "central-only"

[[agents]]
id = "bicarb-8.4"
label = "Sodium bicarbonate 8.4 %"
solute = "sodium bicarbonate"
concentration = "8.4% w/v"
route = "central-only"

[[agents]]
id = "glucose-5"
label = "Glucose 5 %"
solute = "glucose"
concentration = "5% w/v"
route = "central-only"
"""

# Derived with the molar masses (IUPAC/CIAAW): NaCl 58.44, mannitol 182.17,
# NaHCO3 84.01, glucose 180.16 g/mol; full dissociation, as on labels.
DERIVED = [
    # 30 g/L / 58.44 = 513.3 mmol/L; x 2 = 1026.7 mOsm/L (labels: 513 and 1027)
    ("nacl-3", "513", "0.513", "1027", "0.03"),
    # 234 g/L / 58.44 = 4004 mmol/L (label: 4 mEq/mL); x 2 = 8008 mOsm/L
    ("nacl-23.4", "4004", "4.004", "8008", "0.234"),
    # 200 g/L / 182.17 = 1097.9 mOsm/L, no sodium
    ("mannitol-20", "0", "0.000", "1098", "0.2"),
    # 84 g/L / 84.01 = 999.9 mmol/L (label: 1 mmol/mL); x 2 = 1999.8 mOsm/L
    ("bicarb-8.4", "1000", "1.000", "2000", "0.084"),
    # 50 g/L / 180.16 = 277.5 mOsm/L
    ("glucose-5", "0", "0.000", "278", "0.05"),
]


@pytest.fixture
def derived(tmp_path: Path) -> Formulary:
    return load_formulary(write(tmp_path, DERIVED_FILE))


@pytest.mark.parametrize(("agent_id", "sodium", "per_ml", "osmolarity", "g_per_ml"), DERIVED)
def test_agent_cells_show_the_composition_derived_from_the_concentration(
    derived: Formulary, agent_id: str, sodium: str, per_ml: str, osmolarity: str, g_per_ml: str
) -> None:
    rows = {row.id: dict(zip(AGENT_COLUMNS, agent_cells(row), strict=True)) for row in agent_rows(derived)}
    cells = rows[agent_id]
    assert (cells["Na mmol/L"], cells["Na mmol/mL"], cells["mOsm/L"], cells["g/mL"]) == (
        sodium,
        per_ml,
        osmolarity,
        g_per_ml,
    )


def test_agent_rows_keep_the_unrounded_figures(derived: Formulary) -> None:
    row = agent_rows(derived)[0]
    # 30 / 58.44 x 1000 = 513.347 mmol/L
    assert row.sodium_mmol_l == pytest.approx(513.347, abs=1e-3)
    assert row.sodium_mmol_per_ml == pytest.approx(0.513347, abs=1e-6)
    assert row.osmolarity_mosm_l == pytest.approx(1026.694, abs=1e-3)
    assert row.solute_g_per_ml == pytest.approx(0.03)


def test_a_mixed_fluid_has_no_grams_per_ml(demo: Formulary) -> None:
    row = next(r for r in agent_rows(demo) if r.id == "lactated-ringers")
    cells = dict(zip(AGENT_COLUMNS, agent_cells(row), strict=True))
    # Lactated Ringer's: Na 130, about 273 mOsm/L (product labels)
    assert (cells["concentration"], cells["Na mmol/L"], cells["mOsm/L"], cells["g/mL"]) == (
        "as labelled",
        "130",
        "273",
        "n/a",
    )


def test_limit_rows_cover_every_limit_in_order(demo: Formulary) -> None:
    rows = limit_rows(demo)
    assert [r.name for r in rows][:3] == ["sodium_warn", "sodium_refuse", "osmolality_warn"]
    assert [r.name for r in rows] == list(LIMIT_SPECS)


def test_show_json_carries_rows_and_the_file_hash(capsys: pytest.CaptureFixture[str], demo: Formulary) -> None:
    assert main(["formulary", "show", "--json"]) == 0
    document = json.loads(capsys.readouterr().out)
    assert document["formulary"]["sha256"] == demo.sha256
    nacl3 = next(a for a in document["agents"] if a["id"] == "nacl-3")
    # The demo writes the label values 513 mmol/L and 1027 mOsm/L (product labels).
    assert (nacl3["sodium_mmol_l"], nacl3["sodium_mmol_per_ml"], nacl3["osmolarity_mosm_l"]) == (513.0, 0.513, 1027.0)
    assert document["limits"][1] == {
        "name": "sodium_refuse",
        "value": "160 mmol/L",
        "meaning": "serum sodium, current or projected, above which an order is refused",
        "source": "formulary file",
    }


def test_show_of_an_invalid_file_is_one_line_and_exit_two(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    path = write(tmp_path, DERIVED_FILE.replace('"3% w/v"', '"35% w/v"'))
    assert main(["formulary", "show", str(path)]) == 2
    assert capsys.readouterr().err == (
        f"osmodose: formulary {path}:9: agents[1].concentration: '35% w/v' is 35 % w/v, outside the plausible "
        "range for sodium chloride (accepted: 0.1 to 30 % w/v)\n"
    )
