"""Wall time of `python -m osmodose check` against bare pint and pydantic start-up.

Not a test (timings depend on the machine and its load): run it by hand,

    python benchmarks/check_startup.py [--runs 10]

It runs each command once to warm pint's cache and the OS file cache, then
alternates the two commands `--runs` times each, and prints the median and
mean wall time of each and the ratio of the medians. The target is a ratio of
at most 1.3; the exit status is 0 within it and 1 above it.
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import time
from pathlib import Path

REPO_ROOT = Path(__file__).resolve().parent.parent
TARGET = 1.3

CHECK = [
    sys.executable,
    "-m",
    "osmodose",
    "check",
    "--weight", "70", "--age", "45", "--sex", "male", "--sodium", "141",
    "--glucose", "6", "--urea", "5", "--osmolality", "300",
    "--agent", "mannitol-20", "--dose", "1g/kg", "--duration", "20min", "--json",
]  # fmt: skip
BASELINE = [sys.executable, "-c", "import pint, pydantic; pint.UnitRegistry()"]


def _time(command: list[str], env: dict[str, str]) -> float:
    start = time.perf_counter()
    done = subprocess.run(command, env=env, cwd=REPO_ROOT, capture_output=True, check=False)
    elapsed = time.perf_counter() - start
    if done.returncode not in (0, 3, 4):
        raise SystemExit(f"{' '.join(command[:4])} failed ({done.returncode}): {done.stderr.decode()[-400:]}")
    return elapsed


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=10, help="runs of each command (default 10)")
    args = parser.parse_args()
    env = dict(os.environ)
    env["PYTHONPATH"] = str(REPO_ROOT) + os.pathsep + env.get("PYTHONPATH", "")
    _time(CHECK, env)
    _time(BASELINE, env)
    check_times: list[float] = []
    baseline_times: list[float] = []
    for _ in range(args.runs):
        check_times.append(_time(CHECK, env))
        baseline_times.append(_time(BASELINE, env))
    ratio = statistics.median(check_times) / statistics.median(baseline_times)
    for name, times in (("osmodose check", check_times), ("import pint, pydantic; UnitRegistry()", baseline_times)):
        median, mean = statistics.median(times), statistics.mean(times)
        print(f"{name:40s} median {median:.3f} s  mean {mean:.3f} s  (n={len(times)})")
    print(f"ratio of medians: {ratio:.2f} (target <= {TARGET})")
    return 0 if ratio <= TARGET else 1


if __name__ == "__main__":
    raise SystemExit(main())
