"""Benchmark of `osmodose audit` against a polars + numpy floor computing the same figures on the same file.

    python benchmarks/audit_bench.py                    # N = 2x10^5 and 10^6, 5 runs each
    python benchmarks/audit_bench.py --n 200 --runs 1   # a quick look

For each N a synthetic orders file is made (invented patients and orders on
the demo formulary, about 1 row in 100 bad).  Then, in turn, A B A B ...:

* A: `python -m osmodose audit FILE --out results.csv` (every row checked,
  figures, findings and their messages, the summary's counts, bad rows);
* B: `audit_floor.py`: polars reads the file, numpy computes the same 21
  figures and the worst severity, polars writes them (no checks, no text).

Each run is a whole process: its wall time, CPU time and peak resident
memory (from the operating system's accounting of that child).  The ratio
A/B is taken pair by pair and printed as its minimum and median, with the
audit's rows per second; the CPU-time ratio too (steadier than wall time on a
machine other jobs share, and it counts every thread's work).  The floor's figures and statuses are compared with the
audit's on every good row before any number is printed.  A last in-process
run gives the audit's time by stage (read, convert, engine and rules,
output and summary).  Not a test: the suite runs it once on a tiny N.
"""

from __future__ import annotations

import argparse
import csv
import json
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pyarrow as pa

ROOT = Path(__file__).resolve().parent
sys.path.insert(0, str(ROOT.parent))
sys.path.insert(0, str(ROOT))

from audit_floor import FIGURES, floor_tbw  # noqa: E402

from osmodose.formulary import demo_formulary_path, load_formulary  # noqa: E402
from osmodose.science import formulas  # noqa: E402
from osmodose.science.chemistry import MOLAR_MASS_G_PER_MOL  # noqa: E402
from osmodose.science.precision import FIGURE_DECIMALS  # noqa: E402
from osmodose.science.ranges import TBW_SHARE_OF_WEIGHT, WEIGHT_FOR_AGE  # noqa: E402

__all__ = ["floor_params", "floor_tbw", "main", "make_orders"]

HEADER = [
    "order-id",
    "weight[kg]",
    "age",
    "sex",
    "height[cm]",
    "sodium",
    "potassium",
    "glucose[mg/dL]",
    "urea",
    "osmolality",
    "agent",
    "dose",
    "volume[mL]",
    "target-rise",
    "duration[min]",
    "line",
    "tbw-method",
]


def make_orders(path: Path, n: int, seed: int = 7) -> None:
    """An invented order history: plausible patients, the demo agents, about 1 bad row in 100."""
    rng = np.random.default_rng(seed)

    def fmt(values: np.ndarray, digits: int) -> list[str]:
        return [f"{v:.{digits}f}" for v in values.tolist()]

    weight = fmt(rng.uniform(40, 130, n), 1)
    age = fmt(rng.uniform(18, 92, n), 0)
    sex = rng.choice(["female", "male"], n).tolist()
    watson = rng.random(n) < 0.1
    # Heights are recorded for about a third of the patients, and for nearly all whose TBW is by Watson.
    height = np.where((rng.random(n) < 0.3) | (watson & (rng.random(n) < 0.98)), fmt(rng.uniform(150, 195, n), 0), "")
    height = height.tolist()
    sodium = fmt(rng.normal(141, 9, n).clip(115, 170), 0)
    potassium = np.where(rng.random(n) < 0.7, fmt(rng.uniform(3.0, 5.5, n), 1), "").tolist()
    glucose = fmt(rng.uniform(70, 250, n), 0)
    urea = fmt(rng.uniform(2.5, 20, n), 1)
    osmolality = np.where(rng.random(n) < 0.6, fmt(rng.uniform(280, 335, n), 0), "").tolist()
    agent = rng.choice(
        ["mannitol-20", "nacl-3", "nacl-23.4", "nacl-0.9", "glucose-5", "bicarb-8.4", "lactated-ringers", "nacl-7.5"],
        n,
        p=[0.3, 0.25, 0.08, 0.12, 0.1, 0.05, 0.07, 0.03],
    )
    dose = np.full(n, "", dtype=object)
    volume = np.full(n, "", dtype=object)
    rise = np.full(n, "", dtype=object)
    m = agent == "mannitol-20"
    dose[m] = [f"{v:.2f} g/kg" for v in (rng.integers(5, 31, m.sum()) * 0.05).tolist()]
    b = agent == "bicarb-8.4"
    dose[b] = [f"{v} mmol/kg" for v in rng.choice([1, 1.5, 2, 2.5], b.sum()).tolist()]
    for name, sizes in (
        ("nacl-3", [100, 150, 250, 500]),
        ("nacl-23.4", [30, 60]),
        ("nacl-0.9", [500, 1000]),
        ("lactated-ringers", [1000]),
        ("nacl-7.5", [100]),
    ):
        sel = agent == name
        volume[sel] = rng.choice(sizes, sel.sum()).astype(str).tolist()
    g = agent == "glucose-5"
    rise[g] = [f"{v:.0f}" for v in rng.uniform(-8, -2, g.sum()).tolist()]
    duration = fmt(rng.choice([10, 15, 20, 30, 60, 120, 240], n).astype(float), 0)
    line = rng.choice(["central", "peripheral", ""], n).tolist()
    method = np.where(watson, "watson", "").tolist()
    # About 1 row in 100 is bad: a slipped decimal point, an agent the formulary lacks, Watson without a height.
    spoilt = rng.random(n) < 0.005
    weight = [f"{float(w) * 100:.0f}" if s else w for w, s in zip(weight, spoilt.tolist(), strict=True)]
    agent = np.where(rng.random(n) < 0.002, "nacl-9", agent).tolist()
    ids = [f"LP7N-{i:07d}" for i in range(n)]
    columns = [ids, weight, age, sex, height, sodium, potassium, glucose, urea, osmolality, agent]
    columns += [dose.tolist(), volume.tolist(), rise.tolist(), duration, line, method]
    with open(path, "w", newline="", encoding="utf-8") as handle:
        writer = csv.writer(handle, lineterminator="\n")
        writer.writerow(HEADER)
        writer.writerows(zip(*columns, strict=True))


_CONSTANTS = (
    "TBW_FRACTION_MAN",
    "TBW_FRACTION_WOMAN",
    "TBW_FRACTION_ELDERLY_MAN",
    "TBW_FRACTION_ELDERLY_WOMAN",
    "WATSON_MAN_INTERCEPT",
    "WATSON_MAN_AGE",
    "WATSON_MAN_HEIGHT",
    "WATSON_MAN_WEIGHT",
    "WATSON_WOMAN_INTERCEPT",
    "WATSON_WOMAN_HEIGHT",
    "WATSON_WOMAN_WEIGHT",
    "WATSON_SEE_MAN_L",
    "WATSON_SEE_WOMAN_L",
)


def floor_params(formulary: object) -> dict:
    """What the floor needs, as plain numbers: agents, limits, settings, and the constants of formulas.py."""
    agents = []
    for x in formulary.agents:  # type: ignore[attr-defined]
        item = {
            "id": x.id,
            "solute_g_per_l": x.solute_g_per_l,
            "sodium_mmol_l": x.sodium_mmol_l,
            "osmolarity_mosm_l": x.osmolarity_mosm_l,
            "cations_mmol_l": x.cations_mmol_l if x.projects_sodium else None,
            "mannitol": 1.0 if x.solute == "mannitol" else 0.0,
            "central": 1.0 if x.central_only else 0.0,
            "max_rate_ml_h": x.max_rate_ml_h,
            "projects": 1.0 if x.projects_sodium else 0.0,
            "no_max_rate": 1.0 if x.max_rate_ml_h is None else 0.0,
            "adult_only": 1.0 if x.adult_only else 0.0,
        }
        for key in ("dose_warn", "dose_refuse"):
            limit = getattr(x, key)
            for kind in ("g/kg", "mL/kg", "mmol/kg"):
                item[f"{key} {kind}"] = limit.value if limit is not None and limit.kind == kind else None
        agents.append(item)
    settings = formulary.settings  # type: ignore[attr-defined]
    return {
        "agents": agents,
        "limits": formulary.limits.values,  # type: ignore[attr-defined]
        "elderly_age_years": settings.elderly_age_years,
        "adult_age_years": settings.adult_age_years,
        "infant_age_years": settings.infant_age_years,
        "tbw_fraction_infant": settings.tbw_fraction_infant,
        "tbw_fraction_child": settings.tbw_fraction_child,
        "tbw_share_of_weight": TBW_SHARE_OF_WEIGHT,
        "weight_for_age": WEIGHT_FOR_AGE.rows,
        "tbw_method": settings.tbw_method,
        "glucose_g_per_mol": MOLAR_MASS_G_PER_MOL["glucose"],
        "constants": {name: getattr(formulas, name) for name in _CONSTANTS},
    }


def _run(command: list[str]) -> tuple[float, float, float]:
    """(wall seconds, peak resident MB, CPU seconds: user + system) of one whole process."""
    start = time.perf_counter()
    child = subprocess.Popen(command, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    _, status, usage = os.wait4(child.pid, 0)
    wall = time.perf_counter() - start
    child.returncode = os.waitstatus_to_exitcode(status)
    error = child.stderr.read().decode() if child.stderr else ""
    if child.returncode not in (0, 1):
        raise SystemExit(f"{' '.join(command[:5])} failed ({child.returncode}): {error[-600:]}")
    return wall, usage.ru_maxrss / 1024, usage.ru_utime + usage.ru_stime


def _compare(audit_csv: Path, floor_csv: Path) -> int:
    """The floor's figures and statuses against the audit's, on every row the audit could audit."""
    import pyarrow.csv as pacsv  # noqa: PLC0415

    names = [name for name, _ in FIGURES]
    types = {name: pa.float64() for name in names}
    mine = pacsv.read_csv(audit_csv, convert_options=pacsv.ConvertOptions(column_types=types))
    theirs = pacsv.read_csv(floor_csv, convert_options=pacsv.ConvertOptions(column_types=types))
    status = np.asarray(mine.column("status").to_pylist())
    good = status != "error"
    levels = np.select([status == "warn", status == "refuse"], [1, 2], 0)
    assert np.array_equal(levels[good], theirs.column("status").to_numpy()[good]), "the floor's statuses differ"
    for name in names:
        x = mine.column(name).to_numpy(zero_copy_only=False)[good].astype(float)
        y = theirs.column(name).to_numpy(zero_copy_only=False)[good].astype(float)
        # The audit writes each figure rounded to its declared decimals; the floor in full.
        half_step = 0.5 * 10.0 ** -FIGURE_DECIMALS[name]
        assert np.allclose(x, y, rtol=1e-9, atol=half_step * (1 + 1e-6), equal_nan=True), f"the floor's {name} differs"
    return int(good.sum())


def _stages(orders: Path) -> dict[str, float]:
    """The audit's seconds by stage, in a child process of its own."""
    code = (
        "import json, sys, tempfile, time\n"
        "from pathlib import Path\n"
        "from osmodose.audit.run import run_audit\n"
        "from osmodose.audit.output import CsvResults\n"
        "from osmodose.audit.summary import Summary\n"
        "from osmodose.formulary import demo_formulary_path, load_formulary\n"
        "f = load_formulary(demo_formulary_path()); t = {}\n"
        "with tempfile.TemporaryDirectory() as d, open(Path(d) / 'r.csv', 'wb') as out:\n"
        "    s = time.perf_counter()\n"
        f"    run_audit({str(orders)!r}, f, [CsvResults(out, True), Summary(f, 'x')], timings=t)\n"
        "    t['whole'] = time.perf_counter() - s\n"
        "print(json.dumps(t))\n"
    )
    env = dict(os.environ, PYTHONPATH=str(ROOT.parent))
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True, env=env)
    return json.loads(done.stdout)


def _child(*args: str) -> str:
    """Run this script in a child process: the parent stays small, and a child forked from it
    starts its peak-memory count (kept across exec by Linux) from the parent's size."""
    done = subprocess.run([sys.executable, __file__, *args], capture_output=True, text=True, check=True)
    return done.stdout


def measure(n: int, runs: int, folder: Path) -> dict:
    orders, params = folder / f"orders-{n}.csv", folder / "params.json"
    _child("--make", str(n), "--file", str(orders))
    params.write_text(json.dumps(floor_params(load_formulary(demo_formulary_path()))), encoding="utf-8")
    audit_out, floor_out = folder / "audit.csv", folder / "floor.csv"
    audit = [sys.executable, "-m", "osmodose", "audit", str(orders), "--out", str(audit_out), "--force"]
    bare = [sys.executable, str(ROOT / "audit_floor.py"), str(orders), str(params), str(floor_out)]
    _run(audit), _run(bare)  # warm-up: the OS file cache, pint's registry cache
    checked = int(_child("--compare", str(audit_out), str(floor_out)))
    pairs = [(_run(audit), _run(bare)) for _ in range(runs)]
    return {
        "n": n,
        "rows_checked": checked,
        "file_mb": orders.stat().st_size / 1e6,
        "audit_s": [a[0] for a, _ in pairs],
        "floor_s": [b[0] for _, b in pairs],
        "ratio": [a[0] / b[0] for a, b in pairs],
        "cpu_ratio": [a[2] / b[2] for a, b in pairs],
        "audit_mb": max(a[1] for a, _ in pairs),
        "floor_mb": max(b[1] for _, b in pairs),
        "stages": _stages(orders),
    }


def report(results: list[dict]) -> str:
    lines = [
        "osmodose audit benchmark (synthetic orders, demo formulary): audit vs polars + numpy floor",
        "",
        f"{'N':>9} {'audit s min/med':>16} {'floor s min/med':>16} {'ratio min':>10} {'ratio med':>10} "
        f"{'audit rows/s':>13} {'audit MB':>9} {'floor MB':>9} {'CPU ratio min/med':>18}",
    ]
    for r in results:
        med = statistics.median(r["audit_s"])
        lines.append(
            f"{r['n']:>9} {min(r['audit_s']):>7.2f}/{med:<8.2f} "
            f"{min(r['floor_s']):>7.2f}/{statistics.median(r['floor_s']):<8.2f} "
            f"{min(r['ratio']):>10.2f} {statistics.median(r['ratio']):>10.2f} {r['n'] / med:>13,.0f} "
            f"{r['audit_mb']:>9.0f} {r['floor_mb']:>9.0f} "
            f"{min(r['cpu_ratio']):>9.2f}/{statistics.median(r['cpu_ratio']):<8.2f}"
        )
    lines += ["", "audit in-process, s: read / convert / engine+rules / output+summary (whole)"]
    for r in results:
        t = r["stages"]
        lines.append(
            f"{r['n']:>9}  {t['read']:.2f} / {t['convert']:.2f} / {t['engine']:.2f} / {t['sinks']:.2f}"
            f"  ({t['whole']:.2f});  file {r['file_mb']:.0f} MB, floor figures equal on {r['rows_checked']:,} rows"
        )
    return "\n".join(lines)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--n", type=int, nargs="*", default=[200_000, 1_000_000])
    parser.add_argument("--runs", type=int, default=5, help="counted runs of each program per N (default 5)")
    parser.add_argument("--json", action="store_true", help="print the raw numbers as JSON too")
    parser.add_argument("--make", type=int, help=argparse.SUPPRESS)
    parser.add_argument("--file", type=Path, help=argparse.SUPPRESS)
    parser.add_argument("--compare", nargs=2, type=Path, help=argparse.SUPPRESS)
    args = parser.parse_args(argv)
    if args.make is not None:
        make_orders(args.file, args.make)
        return 0
    if args.compare is not None:
        print(_compare(*args.compare))
        return 0
    results = []
    with tempfile.TemporaryDirectory() as folder:
        for n in args.n:
            results.append(measure(n, args.runs, Path(folder)))
    print(report(results))
    if args.json:
        print(json.dumps(results, indent=1))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
