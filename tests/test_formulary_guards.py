"""The formulary guards its own limits: a file per new error, its message word for word, and what still loads.

Lines of the base test file are numbered in tests/formulary_files.py (an invented unit).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from osmodose.cli.main import main
from osmodose.formulary import load_formulary
from osmodose.formulary.limits import LIMIT_SPECS
from tests.formulary_files import NO_COMPOSITION_LINES, edited, write


def validate(capsys: pytest.CaptureFixture[str], path: Path) -> tuple[int, list[str]]:
    code = main(["formulary", "validate", str(path)])
    return code, capsys.readouterr().out.splitlines()


def test_every_default_lies_inside_its_plausible_range() -> None:
    for name, spec in LIMIT_SPECS.items():
        assert spec.plausible is not None, name
        if spec.default is not None:
            assert spec.plausible[0] <= spec.default <= spec.plausible[1], name


# Each case: the line edited, and the whole problem after "LINE: key.path: ".
GUARD_CASES = {
    "a sodium ceiling of 1600 mmol/L (160 with a slipped digit)": (
        {7: 'sodium_refuse = "1600 mmol/L"'},
        "7: limits.sodium_refuse: '1600 mmol/L' is outside the plausible range for this limit "
        "(accepted: 135 to 175 mmol/L)",
    ),
    "an osmolality hold of 3200 mOsm/kg": (
        {8: 'osmolality_refuse = "3200 mOsm/kg"'},
        "8: limits.osmolality_refuse: '3200 mOsm/kg' is outside the plausible range for this limit "
        "(accepted: 280 to 380 mOsm/kg)",
    ),
    "a 24 h rise limit of 100 mmol/L": (
        {8: 'sodium_rise_24h_refuse = "100 mmol/L"'},
        "8: limits.sodium_rise_24h_refuse: '100 mmol/L' is outside the plausible range for this limit "
        "(accepted: 0 to 20 mmol/L)",
    ),
    "an osmolar rate limit of 14 mOsm/kg/min": (
        {8: 'osmolar_rate_refuse = "14 mOsm/kg/min"'},
        "8: limits.osmolar_rate_refuse: '14 mOsm/kg/min' is outside the plausible range for this limit "
        "(accepted: 0.05 to 5 mOsm/kg/min)",
    ),
    # 3 % sodium chloride is 1027 mOsm/L (labels): 100 mL/kg is 102.7 mOsm/kg, above 3 x 10.27 (10 mL/kg of 3 %,
    # paediatric texts) = 30.8 mOsm/kg, which is 30 mL/kg of this agent.
    "a dose limit of 100 mL/kg of 3 % (10 mL/kg with a slipped digit)": (
        {19: 'dose_refuse = "100 mL/kg"'},
        "19: agents[1].dose_refuse: '100 mL/kg' is above 3 times the largest published dose of sodium chloride, "
        "10 mL/kg of 3 % (paediatric texts give 2-10 mL/kg) (accepted: up to 30 mL/kg)",
    ),
    "a maximum rate of 18000 mL/h": (
        {20: 'max_rate = "18000 mL/h"'},
        "20: agents[1].max_rate: '18000 mL/h' is outside the plausible range for a rate (accepted: 0.1 to 6000 mL/h)",
    ),
    # 3 % in the id "nacl-3" and the label, 0.3 % in the concentration: a slipped decimal point.
    "a concentration a tenth of the strength in the id and the label": (
        {13: 'concentration = "0.3% w/v"', **NO_COMPOSITION_LINES},
        "13: agents[1].concentration: '0.3% w/v' is 0.3 % w/v, but the label says 3 % (10 times apart: a slipped "
        "decimal point?); correct the concentration or the label",
    ),
    "a concentration a tenth of the strength in the id alone": (
        {11: 'label = "Hypertonic saline 250 mL"', 13: 'concentration = "0.3% w/v"', **NO_COMPOSITION_LINES},
        "13: agents[1].concentration: '0.3% w/v' is 0.3 % w/v, but the id says 3 % (10 times apart: a slipped "
        "decimal point?); correct the concentration or the id",
    ),
}


@pytest.mark.parametrize(("replace", "problem"), GUARD_CASES.values(), ids=GUARD_CASES)
def test_a_limit_or_strength_outside_its_plausible_range_makes_the_file_invalid(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], replace: dict[int, str], problem: str
) -> None:
    path = write(tmp_path, edited(replace))
    code, lines = validate(capsys, path)
    assert code == 1
    assert lines == [f"{path}:{problem}", f"{path}: not valid: 1 error"]


def test_a_mannitol_dose_limit_of_15_g_per_kg_is_invalid(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    # 1 g/kg is the largest published bolus (Brain Trauma Foundation: 0.25-1 g/kg); three times it is 3 g/kg.
    second = '\n[[agents]]\nid = "mannitol-20"\nlabel = "Mannitol 20 % 500 mL"\nsolute = "mannitol"\n'
    second += 'concentration = "20% w/v"\nroute = "any-line"\ndose_refuse = "15 g/kg"\n'
    path = write(tmp_path, edited(append=second))
    code, lines = validate(capsys, path)
    assert code == 1
    assert lines == [
        f"{path}:28: agents[2].dose_refuse: '15 g/kg' is above 3 times the largest published dose of mannitol, "
        "1 g/kg (Brain Trauma Foundation guidelines: 0.25-1 g/kg) (accepted: up to 3 g/kg)",
        f"{path}: not valid: 1 error",
    ]


def test_limits_inside_their_ranges_load(tmp_path: Path) -> None:
    replace = {7: 'sodium_refuse = "165 mmol/L"', 19: 'dose_refuse = "30 mL/kg"', 20: 'max_rate = "6000 mL/h"'}
    formulary = load_formulary(write(tmp_path, edited(replace)))
    assert formulary.limits.sodium_refuse == 165.0
    assert formulary.agents[0].max_rate_ml_h == 6000.0


KCL_BAG = """
[[agents]]
id = "nacl-0.9-kcl-20"
label = "Sodium chloride 0.9 % with potassium chloride 20 mmol/L, 1000 mL"
solute = "sodium chloride"
concentration = "0.9% w/v"
route = "any-line"
sodium = "154 mmol/L"
potassium = "20 mmol/L"
osmolarity = "{osmolarity}"
"""


def test_a_mixed_bag_counts_its_potassium_chloride_in_the_osmolarity(tmp_path: Path) -> None:
    # 0.9 % NaCl: 9 / 58.44 x 2 x 1000 = 308 mOsm/L; 20 mmol/L KCl adds K+ and Cl-: 40 -> 348 (product labels).
    formulary = load_formulary(write(tmp_path, edited(append=KCL_BAG.format(osmolarity="348 mOsm/L"))))
    bag = formulary.agent("nacl-0.9-kcl-20")
    assert (bag.osmolarity_mosm_l, bag.potassium_mmol_l, bag.cations_mmol_l) == (348.0, 20.0, 174.0)


def test_a_mixed_bag_labelled_without_its_potassium_chloride_is_rejected(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = write(tmp_path, edited(append=KCL_BAG.format(osmolarity="308 mOsm/L")))
    code, lines = validate(capsys, path)
    assert code == 1
    assert lines[0] == (
        f"{path}:30: agents[2].osmolarity: '308 mOsm/L' disagrees with the concentration, which gives 348 mOsm/L "
        "(more than 2% apart)"
    )


def test_dextrose_weighed_as_the_monohydrate_is_252_mosm_per_litre(tmp_path: Path) -> None:
    # 50 g/L / 198.17 g/mol (C6H12O6.H2O, CIAAW) = 252.3 mOsm/L: the figure on such labels.
    glucose = (
        '\n[[agents]]\nid = "glucose-5"\nlabel = "Glucose 5 % (monohydrate)"\nsolute = "glucose monohydrate"\n'
        'concentration = "5% w/v"\nroute = "any-line"\nosmolarity = "252 mOsm/L"\n'
    )
    agent = load_formulary(write(tmp_path, edited(append=glucose))).agent("glucose-5")
    assert agent.osmolarity_mosm_l == 252.0
    assert agent.projects_sodium and agent.sodium_mmol_l == 0.0


def test_the_old_route_words_load_with_a_warning(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    second = '\n[[agents]]\nid = "nacl-0.9"\nlabel = "Sodium chloride 0.9 %"\nsolute = "sodium chloride"\n'
    second += 'concentration = "0.9% w/v"\nroute = "peripheral"\n'
    path = write(tmp_path, edited({14: 'route = "central"'}, second))
    code, lines = validate(capsys, path)
    assert code == 0
    assert lines == [
        f"{path}:14: agents[1].route: warning: 'central' is the old word for 'central-only' (a central line only): "
        'write route = "central-only"',
        f"{path}:27: agents[2].route: warning: 'peripheral' is the old word for 'any-line' (a peripheral or a central "
        'line): write route = "any-line"',
        f'{path}: valid: "Test unit (invented)" version "1", 2 agents (2 warnings)',
    ]
    formulary = load_formulary(path)
    assert [agent.route for agent in formulary.agents] == ["central-only", "any-line"]


def test_adults_only_and_the_dose_weight_show_in_the_dose_limits(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = write(
        tmp_path,
        edited(append="").replace(
            'max_rate = "500 mL/h"', 'max_rate = "500 mL/h"\nadult_only = true\ndose_weight = "ideal"'
        ),
    )
    assert main(["formulary", "show", str(path)]) == 0
    out = capsys.readouterr().out
    assert "warn > 5 mL/kg; refuse > 10 mL/kg; per kg of ideal weight; adults only" in out
