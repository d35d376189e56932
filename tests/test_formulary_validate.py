"""`osmodose formulary validate`: every problem of a broken file, word for word, with its line."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from osmodose.cli.main import main
from osmodose.errors import FormularyProblems
from osmodose.formulary import demo_formulary_path, load_formulary
from osmodose.formulary.validate import validate_formulary
from tests.formulary_files import SECOND_AGENT, edited, write

NO_COMPOSITION = {16: "", 17: ""}  # leave out the label's sodium and osmolarity


def validate(capsys: pytest.CaptureFixture[str], *args: str) -> tuple[int, list[str], str]:
    code = main(["formulary", "validate", *args])
    out, err = capsys.readouterr()
    return code, out.splitlines(), err


def test_the_base_test_file_is_valid(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    path = write(tmp_path, edited())
    code, lines, err = validate(capsys, str(path))
    assert (code, err) == (0, "")
    assert lines == [f'{path}: valid: "Test unit (invented)" version "1", 1 agent']


# Each case: the edit, then every expected line as "LINE: key.path: problem" (the file
# name is prefixed in the test).  Lines of BASE are numbered in tests/formulary_files.py.
ERROR_CASES = {
    "unknown limit key, close to a known one": (
        {7: 'sodium_refuze = "160 mmol/L"'},
        ["7: limits.sodium_refuze: is not a known key (did you mean 'sodium_refuse'?)"],
    ),
    "unknown agent key: the misspelt one and the missing one": (
        {14: 'rout = "central"'},
        [
            '9: agents[1].route: is required but missing (accepted: add it, e.g. route = "any-line")',
            "14: agents[1].rout: is not a known key (did you mean 'route'?)",
        ],
    ),
    "unknown key with nothing close: the known keys are listed": (
        {2: 'title = "Test unit"'},
        [
            '1: formulary.name: is required but missing (accepted: add it, e.g. name = "Ward 4 neuro ICU")',
            "2: formulary.title: is not a known key (known keys here: name, version)",
        ],
    ),
    "unknown table": (
        {5: "[limit]"},
        ["5: limit: is not a known key (did you mean 'limits'?)"],
    ),
    "a limit as a bare number": (
        {7: "sodium_refuse = 160"},
        [
            "7: limits.sodium_refuse: 160 is a number without a unit: write it as quoted text with its unit, "
            'e.g. "160 mmol/L"'
        ],
    ),
    "a version as a bare number": (
        {3: "version = 4.2"},
        ['3: formulary.version: 4.2 is a number: write it as quoted text, e.g. "4.2"'],
    ),
    "a presentation as a bare number": (
        {15: "presentations = [250]"},
        [
            "15: agents[1].presentations[1]: 250 is a number without a unit: write it as quoted text with its "
            'unit, e.g. "250 mL"'
        ],
    ),
    "a concentration as a bare number is reported once, not also as missing": (
        {13: "concentration = 3"},
        [
            "13: agents[1].concentration: 3 is a number without a unit: write it as quoted text with its "
            'unit, e.g. "3 % w/v"'
        ],
    ),
    "a value of the wrong type: what it is, what is accepted, an example (never the library's words)": (
        {7: "sodium_refuse = [160]"},
        ['7: limits.sodium_refuse: is a list, not text (accepted: quoted text, e.g. sodium_refuse = "160 mmol/L")'],
    ),
    "a limit in the wrong dimension": (
        {7: 'sodium_refuse = "160 mOsm/kg"'},
        ["7: limits.sodium_refuse: '160 mOsm/kg' is in the wrong unit (accepted: mmol/L or mEq/L)"],
    ),
    "a concentration in the wrong dimension": (
        {13: 'concentration = "3 mL"'},
        ["13: agents[1].concentration: '3 mL' is in the wrong unit (accepted: g/L or mmol/L)"],
    ),
    "a rate in the wrong dimension": (
        {20: 'max_rate = "500 mL"'},
        ["20: agents[1].max_rate: '500 mL' is in the wrong unit (accepted: mL/h)"],
    ),
    "a dose limit that is not a quantity": (
        {18: 'dose_warn = "five mL/kg"'},
        [
            "18: agents[1].dose_warn: 'five mL/kg' does not start with a number "
            "(accepted: a number in g/kg or mL/kg or mmol/kg or mOsm/kg)"
        ],
    ),
    "a dose limit that is an absolute volume": (
        {18: 'dose_warn = "250 mL"'},
        ["18: agents[1].dose_warn: '250 mL' is in the wrong unit (accepted: g/kg or mL/kg or mmol/kg or mOsm/kg)"],
    ),
    "a dose limit that is a bare ratio, not per kg": (
        {18: 'dose_warn = "5 %"'},
        ["18: agents[1].dose_warn: '5 %' is not a dose per kg (accepted: g/kg, mL/kg, mmol/kg or mOsm/kg)"],
    ),
    "dose limits in two different units": (
        {19: 'dose_refuse = "2 mmol/kg"'},
        ["19: agents[1].dose_refuse: is in mmol/kg but dose_warn is in mL/kg"],
    ),
    "dose warn above dose refuse": (
        {18: 'dose_warn = "12 mL/kg"'},
        ["18: agents[1].dose_warn: '12 mL/kg' is above dose_refuse ('10 mL/kg')"],
    ),
    "limit warn above limit refuse": (
        {6: 'sodium_warn = "165 mmol/L"'},
        ["6: limits.sodium_warn: 165 mmol/L is above sodium_refuse (160)"],
    ),
    "a negative limit (and so below its warn)": (
        {7: 'sodium_refuse = "-160 mmol/L"'},
        [
            "6: limits.sodium_warn: 155 mmol/L is above sodium_refuse (-160)",
            "7: limits.sodium_refuse: '-160 mmol/L' is negative (accepted: a value of 0 or more)",
        ],
    ),
    "a route that is not one of the two": (
        {14: 'route = "centre"'},
        [
            '14: agents[1].route: "centre" is not a route osmodose knows (accepted: "central-only" or "any-line", '
            'e.g. route = "any-line")'
        ],
    ),
    "a required key missing: the line is the agent's table": (
        {11: ""},
        ['9: agents[1].label: is required but missing (accepted: add it, e.g. label = "Sodium chloride 3 % 250 mL")'],
    ),
    "an explicit sodium that disagrees with the concentration": (
        # 3 % w/v: 30 g/L / 58.44 g/mol = 513 mmol/L; 154 is the 0.9 % label (product labels).
        {16: 'sodium = "154 mmol/L"'},
        [
            "16: agents[1].sodium: '154 mmol/L' disagrees with the concentration, which gives 513 mmol/L "
            "(more than 2% apart)"
        ],
    ),
    "an explicit osmolarity that disagrees with the concentration": (
        # 3 % w/v: 2 x 513.3 = 1027 mOsm/L (product labels).
        {17: 'osmolarity = "900 mOsm/L"'},
        [
            "17: agents[1].osmolarity: '900 mOsm/L' disagrees with the concentration, which gives 1027 mOsm/L "
            "(more than 2% apart)"
        ],
    ),
    "a concentration of zero": (
        {13: 'concentration = "0% w/v"', **NO_COMPOSITION},
        ["13: agents[1].concentration: '0% w/v' is not above zero"],
    ),
    "a presentation of zero": (
        {15: 'presentations = ["0 mL"]'},
        ["15: agents[1].presentations[1]: '0 mL' is not above zero"],
    ),
    "a mixed fluid given a concentration": (
        {12: 'solute = "mixed"'},
        [
            "13: agents[1].concentration: a mixed fluid has no single concentration: "
            "give sodium, potassium and osmolarity"
        ],
    ),
    "a mixed fluid without its sodium and osmolarity": (
        {12: 'solute = "mixed"', 13: "", **NO_COMPOSITION},
        [
            "9: agents[1].sodium: is required for a mixed fluid",
            "9: agents[1].osmolarity: is required for a mixed fluid",
        ],
    ),
    "a duplicated id": (
        {},
        ["23: agents[2].id: 'nacl-3' is already the id of agents[1]"],
    ),
    "a file that is not TOML": (
        {3: "version = "},
        ["3: is not valid TOML: Invalid value"],
    ),
}


@pytest.mark.parametrize(("replace", "expected"), ERROR_CASES.values(), ids=ERROR_CASES.keys())
def test_each_problem_is_reported_with_its_line(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], replace: dict[int, str], expected: list[str]
) -> None:
    append = SECOND_AGENT.replace('"mannitol-20"', '"nacl-3"') if not replace else ""
    path = write(tmp_path, edited(replace, append))
    code, lines, err = validate(capsys, str(path))
    assert (code, err) == (1, "")
    count = f"{len(expected)} error{'s' if len(expected) > 1 else ''}"
    assert lines == [f"{path}:{line}" for line in expected] + [f"{path}: not valid: {count}"]


# The per-solute plausible strengths (osmodose.science.ranges.SOLUTE_STRENGTH, sources there).
STRENGTH_CASES = {
    "sodium chloride 35 %, above saturation": ("sodium chloride", "35% w/v", "35", "0.1 to 30"),
    "sodium chloride 0.05 %, a slipped decimal": ("sodium chloride", "0.05% w/v", "0.05", "0.1 to 30"),
    "23.4 % sodium chloride typed as 2340 g/L": ("sodium chloride", "2340 g/L", "234", "0.1 to 30"),
    "mannitol 2 %": ("mannitol", "2% w/v", "2", "5 to 25"),
    "mannitol 30 %, beyond the supersaturated 25 %": ("mannitol", "30% w/v", "30", "5 to 25"),
    "sodium bicarbonate 84 %, g/L typed as %": ("sodium bicarbonate", "84% w/v", "84", "1 to 8.4"),
    "sodium bicarbonate 0.84 %": ("sodium bicarbonate", "0.84% w/v", "0.84", "1 to 8.4"),
    "glucose 1 %": ("glucose", "1% w/v", "1", "2.5 to 70"),
    # 5000 mmol/L x 180.16 g/mol = 900.8 g/L = 90.08 % w/v (arithmetic).
    "glucose 5000 mmol/L": ("glucose", "5000 mmol/L", "90.08", "2.5 to 70"),
}


@pytest.mark.parametrize(("solute", "written", "percent", "accepted"), STRENGTH_CASES.values(), ids=STRENGTH_CASES)
def test_a_concentration_outside_the_plausible_range_for_its_solute_is_an_error(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], solute: str, written: str, percent: str, accepted: str
) -> None:
    replace = {12: f'solute = "{solute}"', 13: f'concentration = "{written}"', 18: "", 19: "", **NO_COMPOSITION}
    path = write(tmp_path, edited(replace))
    code, lines, _ = validate(capsys, str(path))
    assert code == 1
    assert lines[0] == (
        f"{path}:13: agents[1].concentration: '{written}' is {percent} % w/v, outside the plausible range "
        f"for {solute} (accepted: {accepted} % w/v)"
    )


@pytest.mark.parametrize(
    ("solute", "written"),
    [
        ("sodium chloride", "0.18% w/v"),  # weakest sodium chloride stock (in glucose 4 %), product labels
        ("sodium chloride", "4 mEq/mL"),  # the 23.4 % vial's label sodium (product labels)
        ("sodium bicarbonate", "1000 mmol/L"),  # 8.4 % = 1 mmol/mL (label): 84.01 g/L, 8.401 % rounds to 8.40
        ("sodium bicarbonate", "1.26% w/v"),  # isotonic bicarbonate, 150 mmol/L (product labels)
        ("mannitol", "25% w/v"),  # strongest mannitol stock (product labels)
        ("glucose", "70% w/v"),  # strongest glucose stock, for compounding (product labels)
    ],
)
def test_real_stock_strengths_are_inside_the_range(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], solute: str, written: str
) -> None:
    replace = {12: f'solute = "{solute}"', 13: f'concentration = "{written}"', 18: "", 19: "", **NO_COMPOSITION}
    path = write(tmp_path, edited(replace))
    code, _, _ = validate(capsys, str(path))
    assert code == 0


def test_a_23_4_percent_vial_typed_as_2_34_percent_is_caught_by_its_label_and_its_label_sodium(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    # 2.34 % is a plausible strength, so the range cannot catch it; the label says 23.4 %,
    # ten times the concentration (a slipped decimal point), and the vial's label sodium
    # says 4 mEq/mL (product labels) while 23.4 g/L / 58.44 g/mol = 400 mmol/L.
    replace = {
        11: 'label = "Sodium chloride 23.4 % 30 mL vial"',
        13: 'concentration = "2.34% w/v"',
        16: 'sodium = "4 mEq/mL"',
        17: "",
        18: "",
        19: "",
    }
    path = write(tmp_path, edited(replace))
    code, lines, _ = validate(capsys, str(path))
    assert code == 1
    assert lines == [
        f"{path}:13: agents[1].concentration: '2.34% w/v' is 2.34 % w/v, but the label says 23.4 % "
        "(10 times apart: a slipped decimal point?); correct the concentration or the label",
        f"{path}:16: agents[1].sodium: '4 mEq/mL' disagrees with the concentration, which gives 400 mmol/L "
        "(more than 2% apart)",
        f"{path}: not valid: 2 errors",
    ]


def test_without_a_label_sodium_a_tenfold_label_percentage_is_an_error(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    # The 23.4 % vial typed "2.34% w/v" with no label sodium: the label's 23.4 % is ten times
    # the concentration, a slipped decimal point, so the file is not valid (it was a warning).
    replace = {
        11: 'label = "Sodium chloride 23.4 % 30 mL vial"',
        13: 'concentration = "2.34% w/v"',
        **NO_COMPOSITION,
        18: "",
        19: "",
    }
    path = write(tmp_path, edited(replace))
    code, lines, _ = validate(capsys, str(path))
    assert code == 1
    assert lines == [
        f"{path}:13: agents[1].concentration: '2.34% w/v' is 2.34 % w/v, but the label says 23.4 % "
        "(10 times apart: a slipped decimal point?); correct the concentration or the label",
        f"{path}: not valid: 1 error",
    ]


def test_a_label_percentage_that_disagrees_less_than_tenfold_still_only_warns(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    # A 7.5 % label on a 3 % concentration is no slipped decimal point: a warning to look twice.
    replace = {11: 'label = "Sodium chloride 7.5 % 100 mL"', **NO_COMPOSITION, 18: "", 19: ""}
    path = write(tmp_path, edited(replace))
    code, lines, _ = validate(capsys, str(path))
    assert code == 0
    assert lines == [
        f"{path}:11: agents[1].label: warning: 'Sodium chloride 7.5 % 100 mL' says 7.5 % but the "
        "concentration is 3 % w/v: check which one is right",
        f'{path}: valid: "Test unit (invented)" version "1", 1 agent (1 warning)',
    ]


def test_a_peripheral_route_above_the_peripheral_limit_is_a_warning_not_an_error(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    # 3 % NaCl is 1027 mOsm/L (product labels), above the 900 mOsm/L default.
    path = write(tmp_path, edited({14: 'route = "any-line"'}))
    code, lines, _ = validate(capsys, str(path))
    assert code == 0
    assert lines == [
        f"{path}:14: agents[1].route: warning: 'any-line' for an agent of 1027 mOsm/L, above "
        "peripheral_osmolarity_warn (900 mOsm/L): every order on a peripheral line will be warned",
        f'{path}: valid: "Test unit (invented)" version "1", 1 agent (1 warning)',
    ]


def test_a_unit_that_raises_the_peripheral_limit_gets_no_warning(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = write(tmp_path, edited({14: 'route = "any-line"', 8: 'peripheral_osmolarity_warn = "1100 mOsm/L"'}))
    code, lines, _ = validate(capsys, str(path))
    assert code == 0
    assert lines == [f'{path}: valid: "Test unit (invented)" version "1", 1 agent']


def test_every_layer_of_problems_is_reported_in_one_pass_sorted_by_line(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    # A misspelt key does not hide the bad values beside it, nor the duplicate id,
    # nor the warning on an agent that resolves.
    second = SECOND_AGENT.replace('"mannitol-20"', '"nacl-3"').replace('"central-only"', '"any-line"')
    replace = {7: 'sodium_refuze = "160 mmol/L"', 13: 'concentration = "35% w/v"', 16: "", 17: ""}
    path = write(tmp_path, edited(replace, second))
    code, lines, _ = validate(capsys, str(path))
    assert code == 1
    assert lines == [
        f"{path}:7: limits.sodium_refuze: is not a known key (did you mean 'sodium_refuse'?)",
        f"{path}:13: agents[1].concentration: '35% w/v' is 35 % w/v, outside the plausible range for "
        "sodium chloride (accepted: 0.1 to 30 % w/v)",
        f"{path}:23: agents[2].id: 'nacl-3' is already the id of agents[1]",
        # 20 % mannitol: 200 g/L / 182.17 g/mol = 1098 mOsm/L (arithmetic).
        f"{path}:27: agents[2].route: warning: 'any-line' for an agent of 1098 mOsm/L, above "
        "peripheral_osmolarity_warn (900 mOsm/L): every order on a peripheral line will be warned",
        f"{path}: not valid: 3 errors (1 warning)",
    ]


def test_a_file_without_agents_names_the_missing_key_without_a_line(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = write(tmp_path, "\n".join(edited().splitlines()[:8]) + "\n")
    code, lines, _ = validate(capsys, str(path))
    assert code == 1
    assert lines == [
        f"{path}: agents: is required but missing "
        '(accepted: add it, e.g. one [[agents]] table per stock solution, with id = "nacl-3")',
        f"{path}: not valid: 1 error",
    ]


def test_an_unreadable_file_is_one_line_on_stderr_and_exit_two(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    missing = tmp_path / "missing.toml"
    code, lines, err = validate(capsys, str(missing))
    assert (code, lines) == (2, [])
    assert err == f"osmodose: formulary {missing}: cannot be read: No such file or directory\n"


def test_the_demo_formulary_is_valid_with_its_two_peripheral_warnings(capsys: pytest.CaptureFixture[str]) -> None:
    demo = demo_formulary_path()
    code, lines, _ = validate(capsys)
    assert code == 0
    # 3 % NaCl 1027 mOsm/L (product labels); 20 % mannitol 1098 mOsm/L (arithmetic).
    assert lines == [
        f"{demo}:44: agents[2].route: warning: 'any-line' for an agent of 1027 mOsm/L, above "
        "peripheral_osmolarity_warn (900 mOsm/L): every order on a peripheral line will be warned",
        f"{demo}:79: agents[5].route: warning: 'any-line' for an agent of 1098 mOsm/L, above "
        "peripheral_osmolarity_warn (900 mOsm/L): every order on a peripheral line will be warned",
        f'{demo}: valid: "Larkspur Point 7N neuro ICU (fictional demo unit)" version "2026-12-demo", '
        "8 agents (2 warnings)",
    ]


def test_json_lists_errors_and_warnings_with_lines(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    second = SECOND_AGENT.replace('"central-only"', '"any-line"')
    path = write(tmp_path, edited({6: 'sodium_warn = "165 mmol/L"'}, second))
    code = main(["formulary", "validate", str(path), "--json"])
    document = json.loads(capsys.readouterr().out)
    assert code == 1
    assert document["valid"] is False
    assert document["errors"] == [
        {
            "line": 6,
            "key_path": "limits.sodium_warn",
            "problem": "165 mmol/L is above sodium_refuse (160)",
            "message": f"{path}:6: limits.sodium_warn: 165 mmol/L is above sodium_refuse (160)",
        }
    ]
    assert [w["key_path"] for w in document["warnings"]] == ["agents[2].route"]


def test_hard_problems_also_stop_load_formulary_and_check(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    path = write(tmp_path, edited({13: 'concentration = "35% w/v"', **NO_COMPOSITION}))
    with pytest.raises(FormularyProblems):
        load_formulary(path)
    code = main(
        ["check", "--formulary", str(path), "--weight", "70", "--age", "40", "--sex", "male", "--sodium", "140"]
    )
    assert code == 2
    assert capsys.readouterr().err == (
        f"osmodose: formulary {path}:13: agents[1].concentration: '35% w/v' is 35 % w/v, outside the "
        "plausible range for sodium chloride (accepted: 0.1 to 30 % w/v)\n"
    )


def test_warnings_do_not_stop_load_formulary(tmp_path: Path) -> None:
    path = write(tmp_path, edited({14: 'route = "any-line"'}))
    assert load_formulary(path).agents[0].route == "any-line"
    assert len(validate_formulary(path).warnings) == 1


def test_formulary_without_an_action_is_a_usage_error(capsys: pytest.CaptureFixture[str]) -> None:
    with pytest.raises(SystemExit) as stopped:
        main(["formulary"])
    assert stopped.value.code == 2
    assert capsys.readouterr().err == (
        "osmodose formulary: the following arguments are required: ACTION (see osmodose formulary --help)\n"
    )


@pytest.mark.parametrize(
    "label",
    [
        "Sodium chloride 3 % 250 mL",
        "Sodium chloride 3,0 % 250 mL",  # decimal comma
        "Glucose 5 % and sodium chloride 3 %",  # one of several percentages matches
        "Hypertonic saline 250 mL",  # no percentage: nothing to compare
    ],
)
def test_a_label_that_agrees_with_the_concentration_gives_no_warning(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], label: str
) -> None:
    path = write(tmp_path, edited({11: f'label = "{label}"'}))
    code, lines, _ = validate(capsys, str(path))
    assert (code, len(lines)) == (0, 1)
