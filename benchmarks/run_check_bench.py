"""Time of one `run_check` for a full case, against a plain-Python floor computing the same figures.

Not a test (timings depend on the machine and its load): run it by hand,

    python benchmarks/run_check_bench.py [--repeat 2000] [--rounds 7]

`run_check` is what the app runs on every keystroke and `check`, `verify` and
`course plan` run once: a request already read from text, through the engine,
the rule table and the result models.  The floor computes the same figures
(body water, osmolalities, gap, volume, loads, rate, projection) for the same
case in straight-line Python, with no models, rules or columns: what the
arithmetic alone costs.  Each round times `--repeat` calls; the minimum and
median per call over the rounds are printed, with the ratio to the floor
measured in the same run.  The target is under 3 ms a call.
"""

from __future__ import annotations

import argparse
import statistics
import sys
import time
from collections.abc import Callable
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from osmodose.case.inputs import parse_check_request
from osmodose.check.run import run_check
from osmodose.formulary import demo_formulary_path, load_formulary
from osmodose.science import formulas as f

TARGET_MS = 3.0
#: A full case of the demo formulary (an invented patient): every lab, an order with duration and line.
CASE = {
    "weight": "70",
    "age": "45",
    "sex": "male",
    "height": "175",
    "sodium": "141",
    "potassium": "4",
    "glucose": "6",
    "urea": "5",
    "ethanol": "10",
    "osmolality": "300",
    "agent": "mannitol-20",
    "dose": "1g/kg",
    "duration": "20",
    "line": "peripheral",
}


def floor_figures(weight: float, age: float, sodium: float, glucose: float, urea: float, ethanol: float) -> tuple:
    """The same figures for the same case, in straight-line Python (20 % mannitol, 200 g/L, 1098 mOsm/L)."""
    tbw = weight * (f.TBW_FRACTION_MAN if age < 65 else f.TBW_FRACTION_ELDERLY_MAN)
    calculated = 2 * sodium + glucose + urea + ethanol
    effective = 2 * sodium + glucose
    gap = 300.0 - calculated
    volume = 1.0 * weight * 1000.0 / 200.0
    solute = volume * 200.0 / 1000.0
    osmoles = volume * 1098.0 / 1000.0
    rate = volume * 60.0 / 20.0
    per_kg = (volume / weight, solute / weight, osmoles / weight)
    return tbw, calculated, effective, gap, volume, solute, osmoles, rate, per_kg


def _per_call(call: Callable[[], object], repeat: int, rounds: int) -> list[float]:
    times = []
    for _ in range(rounds):
        start = time.perf_counter()
        for _ in range(repeat):
            call()
        times.append((time.perf_counter() - start) / repeat)
    return times


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=2000)
    parser.add_argument("--rounds", type=int, default=7)
    args = parser.parse_args()
    formulary = load_formulary(demo_formulary_path())
    request = parse_check_request(CASE)
    run_check(request, formulary)  # warm caches
    check = _per_call(lambda: run_check(request, formulary), args.repeat, args.rounds)
    parse = _per_call(lambda: parse_check_request(CASE), args.repeat, args.rounds)
    floor = _per_call(lambda: floor_figures(70.0, 45.0, 141.0, 6.0, 5.0, 10.0), args.repeat * 10, args.rounds)
    rows = [("run_check", check), ("parse_check_request", parse), ("floor (arithmetic only)", floor)]
    for name, times in rows:
        print(f"{name:26s} min {min(times) * 1e3:8.4f} ms   median {statistics.median(times) * 1e3:8.4f} ms")
    print(
        f"run_check / floor: min {min(check) / min(floor):.0f}x, "
        f"median {statistics.median(check) / statistics.median(floor):.0f}x"
    )
    print(f"target: run_check under {TARGET_MS:g} ms (median {statistics.median(check) * 1e3:.2f} ms)")
    return 0 if statistics.median(check) * 1e3 < TARGET_MS else 1


if __name__ == "__main__":
    raise SystemExit(main())
