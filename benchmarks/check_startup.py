"""Start-up of `osmodose check` against the floor: Python, pint, pydantic and pint's cached registry.

Not a test (timings depend on the machine and its load): run it by hand,

    python benchmarks/check_startup.py [--runs 15]

The floor is `python -c "import pint, pydantic; pint.UnitRegistry(cache_folder=':auto:')"`:
what any program reading units with pint and validating with pydantic pays
before its own work, with the same on-disk registry cache osmodose uses.
Both commands are first run once (pint's cache, the OS file cache), and the
package is byte-compiled as an installed package is (a source tree run with
PYTHONDONTWRITEBYTECODE set would otherwise compile every module on every
run, which the floor's site-packages never do).  Then the two run in turn,
A B A B ..., `--runs` times each; the ratio is taken pair by pair (so a
drift in the machine's speed hits both sides of a pair alike) and printed as
its minimum and median, for wall time and for CPU time (user + system).
Target: median wall ratio at most 1.3; exit status 0 within it, 1 above it.
"""

from __future__ import annotations

import argparse
import compileall
import os
import resource
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
FLOOR = [sys.executable, "-c", "import pint, pydantic; pint.UnitRegistry(cache_folder=':auto:')"]


def _run(command: list[str], env: dict[str, str]) -> tuple[float, float]:
    """(wall, CPU) seconds of one run of `command` as a whole process."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    start = time.perf_counter()
    done = subprocess.run(command, env=env, cwd=REPO_ROOT, capture_output=True, check=False)
    wall = time.perf_counter() - start
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    if done.returncode not in (0, 3, 4):
        raise SystemExit(f"{' '.join(command[:4])} failed ({done.returncode}): {done.stderr.decode()[-400:]}")
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    return wall, cpu


def _line(name: str, values: list[float], unit: str = " s") -> str:
    return f"{name:34s} min {min(values):.3f}{unit}  median {statistics.median(values):.3f}{unit}"


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=15, help="runs of each command (default 15)")
    args = parser.parse_args()
    compileall.compile_dir(REPO_ROOT / "osmodose", quiet=1)
    env = dict(os.environ)
    env["PYTHONPATH"] = str(REPO_ROOT) + os.pathsep + env.get("PYTHONPATH", "")
    _run(CHECK, env)
    _run(FLOOR, env)
    check: list[tuple[float, float]] = []
    floor: list[tuple[float, float]] = []
    for _ in range(args.runs):
        check.append(_run(CHECK, env))
        floor.append(_run(FLOOR, env))
    wall = [a[0] / b[0] for a, b in zip(check, floor, strict=True)]
    cpu = [a[1] / b[1] for a, b in zip(check, floor, strict=True)]
    print(f"{args.runs} runs each, in turn")
    print(_line("osmodose check, wall", [a[0] for a in check]))
    print(_line("floor (pint + pydantic + cache), wall", [b[0] for b in floor]))
    print(_line("osmodose check, CPU", [a[1] for a in check]))
    print(_line("floor, CPU", [b[1] for b in floor]))
    print(_line("ratio check / floor, wall", wall, ""))
    print(_line("ratio check / floor, CPU", cpu, ""))
    median = statistics.median(wall)
    print(f"median wall ratio {median:.2f} (target <= {TARGET})")
    return 0 if median <= TARGET else 1


if __name__ == "__main__":
    raise SystemExit(main())
