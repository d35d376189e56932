"""Every figure osmodose prints is rounded once, to the precision the trade reads it in, and says so.

The precision of each figure is declared once (`osmodose.science.precision`); the JSON of
`check`, `verify`, `course show|plan`, the audit's rows and the text reports all round by it.
The decimals are the brief of the output work (volumes 0.1 mL, sodium 0.1 mmol/L, osmolality
0.1 mOsm/kg, a stock's mmol/L whole), common practice: what pumps, syringes and laboratory
reports show.
"""

from __future__ import annotations

import contextlib
import io
import json
import math
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from osmodose.cli.main import main
from osmodose.science import precision
from osmodose.science.precision import (
    FIGURE_DECIMALS,
    MOST_DECIMALS,
    UNIT_FIGURES,
    decimals_of,
    figure,
    round_document,
    unit_decimals,
)
from tests.fhir_build import bundle, morning_labs, write

EXAMPLES = Path(__file__).parent.parent / "examples"


def run_json(*args: str) -> tuple[int, Any]:
    """Run a command in-process with --json; its exit status and the parsed document."""
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        code = main([*args, "--json"])
    return code, json.loads(out.getvalue()) if out.getvalue() else None


def undeclared_or_too_long(document: Any, where: str = "") -> list[str]:
    """Every float of a JSON document that has no declared precision or more decimals than declared."""
    problems: list[str] = []
    if isinstance(document, list):
        for i, item in enumerate(document):
            problems += undeclared_or_too_long(item, f"{where}[{i}]")
        return problems
    if not isinstance(document, dict):
        return problems
    unit = document.get("unit")
    for key, value in document.items():
        here = f"{where}.{key}"
        if isinstance(value, (dict, list)):
            problems += undeclared_or_too_long(value, here)
            continue
        if not isinstance(value, float) or not math.isfinite(value):
            continue
        if isinstance(unit, str) and key == "limit":
            allowed = MOST_DECIMALS  # the formulary's own figure, as it writes it
        elif isinstance(unit, str) and key in UNIT_FIGURES:
            allowed = unit_decimals(unit, document.get("code"))
            limit = document.get("limit")
            if key == "value" and isinstance(limit, float) and round(value, allowed) == limit:
                allowed = MOST_DECIMALS  # told apart from its limit, as the message tells it
        elif key in FIGURE_DECIMALS:
            allowed = FIGURE_DECIMALS[key]
        else:
            problems.append(f"{here}: {value!r} has no declared precision")
            continue
        if decimals_of(value) > allowed:
            problems.append(f"{here}: {value!r} has more than {allowed} decimals")
    return problems


# --- the declared precisions the brief names ---------------------------------------------------


@pytest.mark.parametrize(
    ("name", "decimals"),
    [
        ("volume_ml", 1),  # 0.1 mL
        ("rate_ml_h", 1),  # a pump's 0.1 mL/h
        ("projected_sodium_mmol_l", 1),  # 0.1 mmol/L
        ("sodium_change_per_litre_mmol_l", 1),
        ("calculated_osmolality_mosm_kg", 1),  # 0.1 mOsm/kg
        ("osmolar_gap_mosm_kg", 1),
        ("solute_g_per_kg", 2),
    ],
)
def test_the_trade_precisions_are_declared(name: str, decimals: int) -> None:
    assert FIGURE_DECIMALS[name] == decimals


def test_a_stocks_sodium_is_whole_mmol_per_litre() -> None:
    assert precision.STOCK_DECIMALS["sodium_mmol_l"] == 0
    assert precision.STOCK_DECIMALS["osmolarity_mosm_l"] == 0


@pytest.mark.parametrize(
    ("name", "noisy", "shown"),
    [
        ("rate_ml_h", 500.00000000000006, 500.0),  # the float noise the issue quotes
        ("solute_g", 27.900000000000002, 27.9),  # 93 kg x 0.3 g/kg in binary floating point
        ("osmolar_gap_mosm_kg", -0.04, 0.0),  # never "-0.0"
        ("projected_sodium_rise_mmol_l", 2.2662721893491122, 2.3),
    ],
)
def test_noise_is_rounded_away_at_the_output(name: str, noisy: float, shown: float) -> None:
    assert figure(name, noisy) == shown
    assert repr(figure(name, noisy)) == repr(shown)


def test_a_judged_value_is_never_rounded_onto_its_limit() -> None:
    # 310.04 rounds to 310.0 at 0.1 mOsm/kg: "310.0 above the limit of 310" would contradict itself.
    finding = {"code": "osmolality-high", "value": 310.04, "limit": 310.0, "unit": "mOsm/kg"}
    assert round_document(finding)["value"] == 310.04
    assert round_document({**finding, "value": 318.26})["value"] == 318.3


def test_the_decimals_of_a_float_are_counted_as_json_writes_it() -> None:
    assert [decimals_of(x) for x in (350.0, 0.15, 2.565, 1e-05, 1e22)] == [0, 2, 3, 5, 0]


# --- every float of every JSON document --------------------------------------------------------

MAN = ("--weight", "70", "--age", "45", "--sex", "male")

#: Orders across every agent and dose style (a refusal or a warning is as fine as an ok here).
ORDERS = [
    ("--agent", "mannitol-20", "--dose", "1g/kg", "--duration", "20"),
    ("--agent", "nacl-3", "--target-rise", "6", "--duration", "2h", "--line", "peripheral"),
    ("--agent", "nacl-3", "--target-sodium", "126"),
    ("--agent", "nacl-23.4", "--volume", "30", "--duration", "5", "--line", "peripheral"),
    ("--agent", "bicarb-8.4", "--dose", "2mmol/kg"),
    ("--agent", "lactated-ringers", "--volume", "1L", "--duration", "1h"),
    ("--agent", "glucose-5", "--target-rise", "-4"),
]


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    weight=st.floats(20, 180).map(lambda x: round(x, 3)),
    age=st.floats(18, 95).map(lambda x: round(x, 2)),
    sex=st.sampled_from(["female", "male"]),
    sodium=st.floats(110, 165).map(lambda x: round(x, 2)),
    glucose=st.sampled_from(["", "4.7", "126mg/dL", "13.33"]),
    urea=st.sampled_from(["", "5", "14mg/dL", "21.7"]),
    osmolality=st.sampled_from(["", "281", "300.5", "333"]),
    potassium=st.sampled_from(["", "3.1", "4.27"]),
    order=st.sampled_from([(), *ORDERS]),
)
def test_every_float_of_check_json_has_at_most_its_stated_decimals(
    weight: float,
    age: float,
    sex: str,
    sodium: float,
    glucose: str,
    urea: str,
    osmolality: str,
    potassium: str,
    order: tuple[str, ...],
) -> None:
    labs = {"--glucose": glucose, "--urea": urea, "--osmolality": osmolality, "--potassium": potassium}
    args = ["check", "--weight", str(weight), "--age", str(age), "--sex", sex, "--sodium", str(sodium)]
    args += [item for key, value in labs.items() if value for item in (key, value)]
    code, document = run_json(*args, *order)
    if code == 2:  # an order this patient cannot have (an unreachable target): an input error, no JSON
        assert document is None
        return
    assert undeclared_or_too_long(document, "check") == []


def test_every_float_of_verify_json_has_at_most_its_stated_decimals(tmp_path: Path) -> None:
    log = str(tmp_path / "log.jsonl")
    args = ("verify", *MAN, "--sodium", "128", "--glucose", "108mg/dL", "--bun", "14", "--osmolality", "270")
    order = ("--agent", "nacl-3", "--volume", "663", "--duration", "2h", "--stated-dose", "9.5mL/kg")
    code, document = run_json(*args, *order, "--stated-sodium", "133", "--initials", "AB", "--log", log)
    assert code in (0, 3, 4)
    assert undeclared_or_too_long(document, "verify") == []
    code, shown = run_json("log", "show", "1", "--log", log)
    assert undeclared_or_too_long(shown, "log show") == []


def test_every_float_of_course_json_has_at_most_its_stated_decimals() -> None:
    episode = str(EXAMPLES / "demo-episode.json")
    _code, document = run_json("course", "show", episode)
    assert undeclared_or_too_long(document, "course show") == []
    _code, plan = run_json(
        "course", "plan", episode, "--agent", "mannitol-20", "--dose", "0.5g/kg", "--time", "2026-12-01T23:00Z"
    )
    assert undeclared_or_too_long(plan, "course plan") == []


def test_every_float_of_the_audit_has_at_most_its_stated_decimals(tmp_path: Path) -> None:
    orders = tmp_path / "orders.csv"
    orders.write_text(
        "order-id,weight,age,sex,sodium,glucose,urea,osmolality,agent,dose,target-sodium,duration,line\n"
        "A,93,45,male,140,6,5,300,mannitol-20,0.3 g/kg,,20,\n"
        "B,61.7,70,female,121,5.2,7.7,,nacl-3,,126,45,peripheral\n",
        encoding="utf-8",
    )
    _code, rows = run_json("audit", str(orders))
    assert undeclared_or_too_long(rows, "audit") == []
    _code, summary = run_json("audit", str(orders), "--summary")
    assert undeclared_or_too_long(summary, "audit summary") == []


def test_formulary_show_json_gives_stock_figures_as_the_table_prints_them() -> None:
    _code, document = run_json("formulary", "show")
    agents = {row["id"]: row for row in document["agents"]}
    # 8.4 % sodium bicarbonate: 84 g/L / 84.01 g/mol (IUPAC) = 999.88 mmol/L, whole: 1000.
    assert agents["bicarb-8.4"]["sodium_mmol_l"] == 1000.0
    # 7.5 % sodium chloride: 75 g/L / 58.44 g/mol = 1283.37 mmol/L, whole: 1283 (domain table: 1283).
    assert agents["nacl-7.5"]["sodium_mmol_l"] == 1283.0
    assert agents["nacl-7.5"]["sodium_mmol_per_ml"] == 1.283


def test_every_float_of_check_json_with_a_labs_file_has_at_most_its_stated_decimals(tmp_path: Path) -> None:
    # The labs file's provenance (`labs_file`: each value's age in hours) is rounded as declared too.
    path = write(tmp_path / "labs.json", bundle(*morning_labs()))
    _code, document = run_json(
        "check", "--labs", str(path), "--at", "2026-12-01T08:30:00+01:00", "--agent", "nacl-3", "--volume", "250"
    )
    assert document["labs_file"]["fields"]
    assert undeclared_or_too_long(document, "check --labs") == []


@settings(max_examples=2000, deadline=None)
@given(
    value=st.one_of(
        st.floats(allow_nan=True, allow_infinity=True),
        st.floats(-1e4, 1e4),
        # Ties: a half in the last kept place (0.25, 2.675), where rounding rules part.
        st.builds(lambda k, d: (k + 0.5) / 10**d, st.integers(-(10**6), 10**6), st.integers(0, 4)),
    ),
    decimals=st.integers(0, 10),
)
def test_one_float_is_rounded_exactly_as_a_numpy_column_is(value: float, decimals: int) -> None:
    # numpy's own rounding is the reference (precision's docstring: one rule for a float and a column).
    with np.errstate(all="ignore"):  # numpy's rounding of a huge float overflows (to inf) on the way
        column = precision.rounded(np.array([value]), decimals)[0]
        one = precision.rounded(value, decimals)
    assert (math.isnan(one) and math.isnan(column)) or (
        one == column and math.copysign(1, one) == math.copysign(1, column)
    )
