"""Loading a unit's formulary: every problem named with file, key path and line, all in one pass."""

from __future__ import annotations

import hashlib
from pathlib import Path

import pytest

from osmodose.cli.main import main
from osmodose.errors import FormularyError, FormularyProblems
from osmodose.formulary import demo_formulary_path, load_formulary, read_formulary

HEADER = """\
[formulary]
name = "Test unit (invented)"
version = "1"
"""

NACL_3 = """\
[[agents]]
id = "nacl-3"
label = "Sodium chloride 3 %"
solute = "sodium chloride"
concentration = "3% w/v"
route = "peripheral"
"""


def write(tmp_path: Path, text: str, name: str = "unit.toml") -> Path:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def problems_of(path: Path) -> list[str]:
    result = read_formulary(path)
    assert result.formulary is None
    return [str(problem) for problem in result.problems]


# --- a good file -------------------------------------------------------------------------------


def test_a_minimal_file_loads_with_every_default_limit(tmp_path: Path) -> None:
    path = write(tmp_path, HEADER + NACL_3)
    formulary = load_formulary(path)
    assert formulary.name == "Test unit (invented)"
    assert formulary.sha256 == hashlib.sha256(path.read_bytes()).hexdigest()
    # Defaults and their sources: sodium 155 warn (common practice) / 160 refuse (US Joint Trauma
    # System guideline); osmolality 320 refuse (Hinson HE et al. J Intensive Care Med 2013);
    # 24 h rise 8 warn / 10 refuse (Verbalis JG et al. Am J Med 2013; Spasovski G et al. 2014).
    assert formulary.limits.get("sodium_warn") == 155.0
    assert formulary.limits.get("sodium_refuse") == 160.0
    assert formulary.limits.get("osmolality_refuse") == 320.0
    assert formulary.limits.get("sodium_rise_24h_warn") == 8.0
    assert formulary.limits.get("sodium_rise_24h_refuse") == 10.0
    assert formulary.limits.get("peripheral_osmolarity_warn") == 900.0
    assert formulary.limits.source("sodium_refuse").startswith("default: ")
    # 3 % w/v NaCl: 30 g/L / 58.44 g/mol = 513.3 mmol/L, x 2 = 1026.7 mOsm/L (arithmetic from molar mass).
    agent = formulary.agent("nacl-3")
    assert agent.sodium_mmol_l == pytest.approx(30 / 58.44 * 1000)
    assert agent.osmolarity_mosm_l == pytest.approx(2 * 30 / 58.44 * 1000)


def test_the_demo_formulary_loads_and_names_its_file() -> None:
    path = demo_formulary_path()
    formulary = load_formulary(path)
    assert formulary.sha256 == hashlib.sha256(path.read_bytes()).hexdigest()
    assert {a.id for a in formulary.agents} >= {"nacl-3", "nacl-23.4", "mannitol-20", "glucose-5"}


@pytest.mark.parametrize(
    ("written", "canonical"),
    [
        ('osmolality_warn = "305 mOsm/kg"', ("osmolality_warn", 305.0)),
        # SI laboratories write osmolality as mmol/kg; it is the same figure in mOsm/kg.
        ('osmolality_warn = "305 mmol/kg"', ("osmolality_warn", 305.0)),
        ('osmolar_gap_warn = "15 mmol/kg"', ("osmolar_gap_warn", 15.0)),
        ('sodium_warn = "150 mEq/L"', ("sodium_warn", 150.0)),
        ('lab_max_age = "240 min"', ("lab_max_age", 4.0)),
    ],
)
def test_a_limit_in_any_accepted_unit_is_read_in_the_canonical_one(
    tmp_path: Path, written: str, canonical: tuple[str, float]
) -> None:
    path = write(tmp_path, HEADER + "[limits]\n" + written + "\n" + NACL_3)
    name, value = canonical
    formulary = load_formulary(path)
    assert formulary.limits.get(name) == pytest.approx(value)
    assert formulary.limits.source(name) == "formulary file"


def test_the_elderly_cut_off_is_a_setting(tmp_path: Path) -> None:
    path = write(tmp_path, HEADER + "[settings]\nelderly_age_years = 70\n" + NACL_3)
    assert load_formulary(path).settings.elderly_age_years == 70.0


# --- one problem each, word for word -----------------------------------------------------------


def test_bad_toml_names_the_line(tmp_path: Path) -> None:
    path = write(tmp_path, HEADER + "[limits]\nsodium_warn = = 1\n" + NACL_3)
    assert problems_of(path) == [f"formulary {path}:5: is not valid TOML: Invalid value"]


def test_an_unknown_key_is_rejected_not_ignored(tmp_path: Path) -> None:
    # A misspelt limit must never fall back silently to its default.
    path = write(tmp_path, HEADER + '[limits]\nsodium_wran = "150 mmol/L"\n' + NACL_3)
    assert problems_of(path) == [
        f"formulary {path}:5: limits.sodium_wran: is not a known key (did you mean 'sodium_warn'?)"
    ]


def test_an_unknown_agent_key_names_the_agent_and_its_line(tmp_path: Path) -> None:
    path = write(tmp_path, HEADER + NACL_3 + 'colour = "blue"\n')
    assert problems_of(path) == [
        f"formulary {path}:10: agents[1].colour: is not a known key (known keys here: id, label, solute, "
        "concentration, route, presentations, dose_warn, dose_refuse, max_rate, sodium, potassium, osmolarity, codes)"
    ]


def test_a_limit_in_the_wrong_dimension(tmp_path: Path) -> None:
    path = write(tmp_path, HEADER + '[limits]\nsodium_refuse = "160 mOsm/kg"\n' + NACL_3)
    assert problems_of(path) == [
        f"formulary {path}:5: limits.sodium_refuse: '160 mOsm/kg' is in the wrong unit (accepted: mmol/L or mEq/L)"
    ]


def test_an_osmolality_limit_in_mmol_per_litre_is_the_wrong_dimension(tmp_path: Path) -> None:
    path = write(tmp_path, HEADER + '[limits]\nosmolality_refuse = "320 mmol/L"\n' + NACL_3)
    assert problems_of(path) == [
        f"formulary {path}:5: limits.osmolality_refuse: '320 mmol/L' is in the wrong unit "
        "(accepted: mOsm/kg or mmol/kg)"
    ]


def test_a_dose_limit_that_is_not_per_kg(tmp_path: Path) -> None:
    path = write(tmp_path, HEADER + NACL_3 + 'dose_warn = "250 mL"\n')
    assert problems_of(path) == [
        f"formulary {path}:10: agents[1].dose_warn: '250 mL' is in the wrong unit "
        "(accepted: g/kg or mL/kg or mmol/kg or mOsm/kg)"
    ]


def test_dose_limits_in_two_different_units(tmp_path: Path) -> None:
    path = write(tmp_path, HEADER + NACL_3 + 'dose_warn = "5 mL/kg"\ndose_refuse = "0.3 g/kg"\n')
    assert problems_of(path) == [f"formulary {path}:11: agents[1].dose_refuse: is in g/kg but dose_warn is in mL/kg"]


def test_a_dose_warn_above_its_refuse(tmp_path: Path) -> None:
    path = write(tmp_path, HEADER + NACL_3 + 'dose_warn = "10 mL/kg"\ndose_refuse = "5 mL/kg"\n')
    assert problems_of(path) == [
        f"formulary {path}:10: agents[1].dose_warn: '10 mL/kg' is above dose_refuse ('5 mL/kg')"
    ]


def test_a_mistyped_vial_label_is_caught_by_its_concentration(tmp_path: Path) -> None:
    # 23.4 % NaCl = 234 g/L / 58.44 g/mol = 4004 mmol/L (labelled 4 mEq/mL); a label of 400 mmol/L
    # is a slipped zero, more than 2 % from the derived value.
    agent = """\
[[agents]]
id = "nacl-23.4"
label = "Sodium chloride 23.4 % vial"
solute = "sodium chloride"
concentration = "23.4% w/v"
route = "central"
sodium = "400 mmol/L"
"""
    path = write(tmp_path, HEADER + agent)
    assert problems_of(path) == [
        f"formulary {path}:10: agents[1].sodium: '400 mmol/L' disagrees with the concentration, "
        "which gives 4004 mmol/L (more than 2% apart)"
    ]


def test_a_wrong_osmolarity_label_is_caught_too(tmp_path: Path) -> None:
    # 20 % mannitol: 200 g/L / 182.17 g/mol = 1098 mOsm/L (arithmetic from molar mass); 1372 is the 25 % figure.
    agent = """\
[[agents]]
id = "mannitol-20"
label = "Mannitol 20 %"
solute = "mannitol"
concentration = "20% w/v"
route = "peripheral"
osmolarity = "1372 mOsm/L"
"""
    path = write(tmp_path, HEADER + agent)
    assert problems_of(path) == [
        f"formulary {path}:10: agents[1].osmolarity: '1372 mOsm/L' disagrees with the concentration, "
        "which gives 1098 mOsm/L (more than 2% apart)"
    ]


@pytest.mark.parametrize(
    ("label", "accepted"),
    [
        # 3 % NaCl derives 513.35 mmol/L; 2 % of it is 10.27, so 503.1 to 523.6 pass.
        ("513 mmol/L", True),  # product label
        ("523 mmol/L", True),
        ("504 mmol/L", True),
        ("524 mmol/L", False),
        ("503 mmol/L", False),
    ],
)
def test_label_rounding_within_two_percent_is_accepted(tmp_path: Path, label: str, accepted: bool) -> None:
    path = write(tmp_path, HEADER + NACL_3 + f'sodium = "{label}"\n')
    assert (read_formulary(path).formulary is not None) is accepted


def test_a_duplicate_id(tmp_path: Path) -> None:
    path = write(tmp_path, HEADER + NACL_3 + NACL_3)
    assert problems_of(path) == [f"formulary {path}:11: agents[2].id: 'nacl-3' is already the id of agents[1]"]


def test_a_warn_limit_above_its_refuse_limit(tmp_path: Path) -> None:
    path = write(tmp_path, HEADER + '[limits]\nsodium_warn = "165 mmol/L"\n' + NACL_3)
    assert problems_of(path) == [f"formulary {path}:5: limits.sodium_warn: 165 mmol/L is above sodium_refuse (160)"]


def test_a_mixed_fluid_without_its_sodium(tmp_path: Path) -> None:
    agent = """\
[[agents]]
id = "lr"
label = "Lactated Ringer's as labelled"
solute = "mixed"
route = "peripheral"
potassium = "4 mmol/L"
osmolarity = "273 mOsm/L"
"""
    path = write(tmp_path, HEADER + agent)
    # The missing key has no line of its own: the line of its [[agents]] table is named.
    assert problems_of(path) == [f"formulary {path}:4: agents[1].sodium: is required for a mixed fluid"]


def test_an_unknown_solute(tmp_path: Path) -> None:
    path = write(tmp_path, HEADER + NACL_3.replace('"sodium chloride"', '"sodium chlorid"'))
    assert problems_of(path) == [
        f"formulary {path}:7: agents[1].solute: 'sodium chlorid' is not one of "
        "'sodium chloride', 'mannitol', 'sodium bicarbonate', 'glucose' or 'mixed'"
    ]


def test_a_missing_file(tmp_path: Path) -> None:
    path = tmp_path / "absent.toml"
    assert problems_of(path) == [f"formulary {path}: cannot be read: No such file or directory"]


# --- all problems in one pass ------------------------------------------------------------------


def test_every_problem_is_collected_in_one_pass(tmp_path: Path) -> None:
    text = (
        HEADER
        + '[limits]\nsodium_warn = "165 mmol/L"\nosmolality_warn = "310 mmol/L"\n'
        + NACL_3
        + 'sodium = "400 mmol/L"\n'
        + NACL_3
    )
    path = write(tmp_path, text)
    assert problems_of(path) == [
        f"formulary {path}:6: limits.osmolality_warn: '310 mmol/L' is in the wrong unit (accepted: mOsm/kg or mmol/kg)",
        f"formulary {path}:5: limits.sodium_warn: 165 mmol/L is above sodium_refuse (160)",
        f"formulary {path}:13: agents[1].sodium: '400 mmol/L' disagrees with the concentration, "
        "which gives 513 mmol/L (more than 2% apart)",
        f"formulary {path}:15: agents[2].id: 'nacl-3' is already the id of agents[1]",
    ]
    with pytest.raises(FormularyProblems) as caught:
        load_formulary(path)
    assert len(caught.value.problems) == 4
    assert str(caught.value) == (
        f"formulary {path}:6: limits.osmolality_warn: '310 mmol/L' is in the wrong unit "
        "(accepted: mOsm/kg or mmol/kg) (and 3 more problems)"
    )
    assert isinstance(caught.value, FormularyError)


def test_a_bad_formulary_on_the_command_line_is_one_line_and_exit_two(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = write(tmp_path, HEADER + '[limits]\nsodium_wran = "150 mmol/L"\n' + NACL_3)
    code = main(
        ["check", "--formulary", str(path), "--weight", "70", "--age", "40", "--sex", "male", "--sodium", "140"]
    )
    captured = capsys.readouterr()
    assert code == 2
    assert captured.out == ""
    assert (
        captured.err
        == f"osmodose: formulary {path}:5: limits.sodium_wran: is not a known key (did you mean 'sodium_warn'?)\n"
    )


def test_a_gram_limit_on_a_mixed_fluid_could_never_fire(tmp_path: Path) -> None:
    # A mixed fluid has no solute grams, so a g/kg limit would be checked against nothing.
    agent = """\
[[agents]]
id = "lr"
label = "Lactated Ringer's as labelled"
solute = "mixed"
route = "peripheral"
sodium = "130 mmol/L"
osmolarity = "273 mOsm/L"
dose_refuse = "1 g/kg"
"""
    path = write(tmp_path, HEADER + agent)
    assert problems_of(path) == [
        f"formulary {path}:11: agents[1].dose_refuse: '1 g/kg' is in g/kg, "
        "but a mixed fluid has no single solute to weigh"
    ]


def test_a_sodium_limit_on_a_sodium_free_agent_could_never_fire(tmp_path: Path) -> None:
    # Mannitol carries no sodium: a mmol/kg (sodium) limit is always 0 and never fires.
    agent = """\
[[agents]]
id = "mannitol-20"
label = "Mannitol 20 %"
solute = "mannitol"
concentration = "20% w/v"
route = "peripheral"
dose_warn = "2 mmol/kg"
"""
    path = write(tmp_path, HEADER + agent)
    assert problems_of(path) == [
        f"formulary {path}:10: agents[1].dose_warn: '2 mmol/kg' is in mmol/kg of sodium, but this agent has no sodium"
    ]
