"""The audit benchmark runs (on a small N); its numbers are not judged here (see docs/audit.md)."""

from __future__ import annotations

import importlib.util

import pytest

from tests.conftest import REPO_ROOT


def test_benchmark_runs_on_a_small_file(capsys: pytest.CaptureFixture[str]) -> None:
    spec = importlib.util.spec_from_file_location("audit_bench", REPO_ROOT / "benchmarks" / "audit_bench.py")
    assert spec is not None and spec.loader is not None
    bench = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(bench)
    assert bench.main(["--n", "200", "--check-sample", "20"]) == 0
    out = capsys.readouterr().out
    assert out.startswith("osmodose audit benchmark")
    assert "\n      200 " in out  # one line of figures for N = 200
