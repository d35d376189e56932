"""The audit benchmark runs (on a small N); its numbers are not judged here (see docs/audit.md).

The floor it compares with must compute what the audit computes: the run
itself compares the floor's figures and statuses with the audit's on every
good row, and the floor's total body water must follow `formulas.py`.
"""

from __future__ import annotations

import importlib.util
from types import ModuleType

import numpy as np
import pytest

from osmodose.formulary import demo_formulary_path, load_formulary
from osmodose.science import formulas
from tests.conftest import REPO_ROOT


@pytest.fixture(scope="module")
def bench() -> ModuleType:
    spec = importlib.util.spec_from_file_location("audit_bench", REPO_ROOT / "benchmarks" / "audit_bench.py")
    assert spec is not None and spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def test_benchmark_runs_on_a_small_file(bench: ModuleType, capsys: pytest.CaptureFixture[str]) -> None:
    pytest.importorskip("polars")  # the floor program's reader and writer (the bench extra)
    # main() also checks the floor's figures and statuses against the audit's, and fails when they differ.
    assert bench.main(["--n", "200", "--runs", "1"]) == 0
    out = capsys.readouterr().out
    assert out.startswith("osmodose audit benchmark")
    assert "\n      200 " in out  # one line of figures for N = 200
    assert "floor figures equal on 198 rows" in out


@pytest.mark.parametrize(
    "changed",
    [
        {},
        # A changed fraction or a digit-swapped Watson age coefficient (0.09156) in formulas.py
        # must reach the floor too, or the floor would drift away from the engine unseen.
        # (the children's fractions are formulary settings now, read from the settings by both)
        {"TBW_FRACTION_MAN": 0.62, "TBW_FRACTION_ELDERLY_WOMAN": 0.46},
        {"WATSON_MAN_AGE": 0.09156, "WATSON_WOMAN_WEIGHT": 0.25, "WATSON_MAN_INTERCEPT": 2.5},
    ],
)
def test_floor_total_body_water_takes_the_constants_of_the_formulas(
    bench: ModuleType, monkeypatch: pytest.MonkeyPatch, changed: dict[str, float]
) -> None:
    for name, value in changed.items():
        monkeypatch.setattr(formulas, name, value)
    formulary = load_formulary(demo_formulary_path())
    settings = formulary.settings
    # Invented patients: children, adults and elderly of both sexes, by fraction and by Watson.
    age = np.array([5.0, 30.0, 70.0, 5.0, 30.0, 70.0])
    male = np.array([True, True, True, False, False, False])
    w, h = np.array([20.0, 80.0, 70.0, 18.0, 60.0, 55.0]), np.array([110.0, 180.0, 175.0, 105.0, 165.0, 160.0])
    fraction = formulas.tbw_fraction(
        age,
        male,
        settings.elderly_age_years,
        settings.adult_age_years,
        settings.infant_age_years,
        settings.tbw_fraction_infant,
        settings.tbw_fraction_child,
    )
    expected_fraction = formulas.tbw_from_fraction(w, fraction)
    expected_watson = formulas.tbw_watson(age, h, w, male)
    for use_watson, expected in ((False, expected_fraction), (True, expected_watson)):
        got = bench.floor_tbw(w, age, h, male, np.full(6, use_watson), bench.floor_params(formulary))
        np.testing.assert_allclose(got, expected, rtol=1e-12)
