"""Benchmark of `osmodose audit` against a bare-numpy floor and the row-by-row check path.

    python benchmarks/audit_bench.py                 # N = 10^4, 10^5, 10^6
    python benchmarks/audit_bench.py --n 200 --check-sample 50

For each N a child process writes a synthetic orders file (invented patients
and orders on the demo formulary), audits it to a results CSV with the summary
(timed by stage), records its peak resident memory, then times on the same
canonical arrays:

* the floor: the same formulas and rule thresholds in plain numpy, written
  here only and compared with the engine's figures and statuses;
* the engine and rules on the whole file as one batch (no chunks);
* a bare parse: the csv module and float conversion, no validation;
* `parse_check_request` + `run_check` on a sample of rows, extrapolated to N.

Not a test: the suite only runs it once on a small N to see that it works.
"""

from __future__ import annotations

import argparse
import contextlib
import csv
import gc
import json
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from osmodose.audit.columns import check_fields  # noqa: E402
from osmodose.audit.convert import convert  # noqa: E402
from osmodose.audit.output import CsvResults  # noqa: E402
from osmodose.audit.reader import open_orders  # noqa: E402
from osmodose.audit.run import run_audit  # noqa: E402
from osmodose.audit.summary import Summary  # noqa: E402
from osmodose.case.inputs import parse_check_request  # noqa: E402
from osmodose.check.engine import compute  # noqa: E402
from osmodose.check.rules import evaluate  # noqa: E402
from osmodose.check.run import run_check  # noqa: E402
from osmodose.errors import InputError  # noqa: E402
from osmodose.formulary import demo_formulary_path, load_formulary  # noqa: E402
from osmodose.science import formulas  # noqa: E402

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


def floor_tbw(
    w: np.ndarray, age: np.ndarray, h: np.ndarray, male: np.ndarray, use_watson: np.ndarray, settings: object
) -> np.ndarray:
    """Total body water in plain numpy, with the fractions and Watson coefficients of `osmodose.science.formulas`."""
    elderly = age >= settings.elderly_age_years
    man = np.where(elderly, formulas.TBW_FRACTION_ELDERLY_MAN, formulas.TBW_FRACTION_MAN)
    woman = np.where(elderly, formulas.TBW_FRACTION_ELDERLY_WOMAN, formulas.TBW_FRACTION_WOMAN)
    fraction = np.where(age < settings.adult_age_years, formulas.TBW_FRACTION_CHILD, np.where(male, man, woman))
    men = (
        formulas.WATSON_MAN_INTERCEPT
        - formulas.WATSON_MAN_AGE * age
        + formulas.WATSON_MAN_HEIGHT * h
        + formulas.WATSON_MAN_WEIGHT * w
    )
    women = formulas.WATSON_WOMAN_INTERCEPT + formulas.WATSON_WOMAN_HEIGHT * h + formulas.WATSON_WOMAN_WEIGHT * w
    return np.where(use_watson, np.where(male, men, women), w * fraction)


def floor(a: dict[str, np.ndarray], agents: tuple, settings: object, limits: object) -> dict[str, np.ndarray]:
    """The engine's formulas and the rules' thresholds in plain numpy: the speed floor."""
    idx = a["agent_index"]
    has = idx >= 0
    safe = np.where(has, idx, len(agents))

    def table(values: list[float]) -> np.ndarray:
        return np.asarray([*values, np.nan], dtype=float)[safe]

    g_l = table([np.nan if x.solute_g_per_l is None else x.solute_g_per_l for x in agents])
    na_l = table([x.sodium_mmol_l for x in agents])
    osm_l = table([x.osmolarity_mosm_l for x in agents])
    cations = table([x.cations_mmol_l if x.projects_sodium else np.nan for x in agents])
    mannitol = table([1.0 if x.solute == "mannitol" else 0.0 for x in agents]) == 1
    central = table([1.0 if x.route == "central" else 0.0 for x in agents]) == 1
    w, age, h, male, na = a["weight"], a["age"], a["height"], a["male"] == 1, a["sodium"]
    tbw = floor_tbw(w, age, h, male, a["use_watson"], settings)
    calc = 2 * na + a["glucose"] + a["urea"] + np.nan_to_num(a["ethanol"])
    gap = a["osmolality"] - calc
    amount = np.where(a["per_kg"], a["amount"] * w, a["amount"])
    unit = a["unit_code"]
    gapc = cations - na
    r = a["amount"]
    reach = (r != 0) & (np.sign(gapc) == np.sign(r)) & (np.abs(gapc) > np.abs(r))
    volume = np.select(
        [unit == 2, unit == 1, unit == 3, unit == 4, unit == 5],
        [
            amount,
            amount / g_l * 1000,
            amount / np.where(na_l > 0, na_l, np.nan) * 1000,
            amount / np.where(osm_l > 0, osm_l, np.nan) * 1000,
            np.where(reach, r * tbw / (gapc - r), np.nan) * 1000,
        ],
        default=np.nan,
    )
    volume = np.where(has, volume, np.nan)
    litres = volume / 1000
    out = {
        "tbw_l": tbw,
        "calculated_osmolality": calc,
        "osmolar_gap": gap,
        "volume_ml": volume,
        "solute_g_per_kg": litres * g_l / w,
        "volume_ml_per_kg": volume / w,
        "sodium_mmol_per_kg": litres * na_l / w,
        "osmoles_mosm_per_kg": litres * osm_l / w,
        "rate_ml_h": volume / np.where(a["duration"] > 0, a["duration"], np.nan) * 60,
    }
    projected = na + litres * (cations - na) / (tbw + litres)
    rise = projected - na
    out["projected_sodium"] = projected
    osmolality = np.where(np.isnan(a["osmolality"]), calc, a["osmolality"])
    lowering = rise < 0
    v = limits.values

    def sev(value: np.ndarray, warn: float | np.ndarray, refuse: float | np.ndarray) -> np.ndarray:
        # Limits are positive; within 1e-9 (relative) of a limit is at it (rules.LIMIT_RELATIVE_TOLERANCE).
        return np.where(value > refuse * (1 + 1e-9), 2, np.where(value > warn * (1 + 1e-9), 1, 0))

    def below(value: np.ndarray, warn: float, refuse: float) -> np.ndarray:
        # A lower limit: past it from below (same tolerance, mirrored).
        return np.where(value < refuse * (1 - 1e-9), 2, np.where(value < warn * (1 - 1e-9), 1, 0))

    with np.errstate(invalid="ignore"):
        high_risk = (na <= 105) | (a["potassium"] < 3.5)
    rise_refuse = np.where(
        high_risk, min(v["sodium_rise_24h_refuse"], v["sodium_rise_24h_high_risk_refuse"]), v["sodium_rise_24h_refuse"]
    )
    worst = np.where(lowering, 0, sev(na, v["sodium_warn"], v["sodium_refuse"]))
    worst = np.maximum(worst, np.where(has & ~lowering, sev(projected, v["sodium_warn"], v["sodium_refuse"]), 0))
    worst = np.maximum(
        worst, np.where(has & lowering, below(projected, v["sodium_low_warn"], v["sodium_low_refuse"]), 0)
    )
    osm_judged = mannitol | ~has
    worst = np.maximum(worst, np.where(osm_judged, sev(osmolality, v["osmolality_warn"], v["osmolality_refuse"]), 0))
    worst = np.maximum(worst, np.where(mannitol, sev(gap, v["osmolar_gap_warn"], v["osmolar_gap_refuse"]), 0))
    worst = np.maximum(worst, np.where(gap < -v["osmolar_gap_negative_warn"] * (1 + 1e-9), 1, 0))
    worst = np.maximum(worst, np.where(mannitol & np.isnan(osmolality), 1, 0))
    rise_judged = has & (na < v["sodium_rise_applies_below"])
    worst = np.maximum(worst, np.where(rise_judged, sev(rise, v["sodium_rise_24h_warn"], rise_refuse), 0))
    worst = np.maximum(worst, np.where(has, sev(-rise, v["sodium_fall_24h_warn"], v["sodium_fall_24h_refuse"]), 0))
    for kind, figure in (("g/kg", "solute_g_per_kg"), ("mL/kg", "volume_ml_per_kg"), ("mmol/kg", "sodium_mmol_per_kg")):
        warn = table([d.value if (d := x.dose_warn) and d.kind == kind else np.inf for x in agents])
        refuse = table([d.value if (d := x.dose_refuse) and d.kind == kind else np.inf for x in agents])
        worst = np.maximum(worst, sev(out[figure], warn, refuse))
    max_rate = table([np.nan if x.max_rate_ml_h is None else x.max_rate_ml_h for x in agents])
    worst = np.maximum(worst, np.where(out["rate_ml_h"] > max_rate * (1 + 1e-9), 2, 0))
    peripheral = a["line"] == "peripheral"
    worst = np.maximum(worst, np.where(peripheral & central, 2, 0))
    over = osm_l > v["peripheral_osmolarity_warn"] * (1 + 1e-9)
    worst = np.maximum(worst, np.where(peripheral & ~central & over, 1, 0))
    out["status"] = worst
    return out


def _rss_mb() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024  # Linux: kB


def _bare_parse(path: Path) -> float:
    """csv rows -> float columns (Python's float(), the fastest stdlib way), nothing checked."""
    start = time.perf_counter()
    numbers = ("weight", "age", "height", "sodium", "potassium", "glucose", "urea", "osmolality")
    numbers += ("volume", "target-rise", "duration")
    numeric = [i for i, name in enumerate(HEADER) if name.split("[")[0] in numbers]
    nan = float("nan")
    gc.disable()
    with open(path, newline="", encoding="utf-8") as handle:
        reader = csv.reader(handle)
        next(reader)
        while True:
            rows = [row for _, row in zip(range(50_000), reader, strict=False)]
            if not rows:
                break
            columns = list(zip(*rows, strict=True))
            for i in numeric:
                np.fromiter((float(c) if c else nan for c in columns[i]), dtype=float, count=len(rows))
    gc.enable()
    return time.perf_counter() - start


def measure(orders: Path, n: int, check_sample: int) -> dict[str, float]:
    """Everything for one N (run in a child process so peak memory is this N's alone)."""
    formulary = load_formulary(demo_formulary_path())
    base_rss = _rss_mb()
    with tempfile.TemporaryDirectory() as folder:
        timings: dict[str, float] = {}
        start = time.perf_counter()
        with open(Path(folder) / "results.csv", "wb") as out:
            run_audit(orders, formulary, [CsvResults(out, True), Summary(formulary, str(orders))], timings=timings)
        whole = time.perf_counter() - start
        peak_rss = _rss_mb()

        # The same canonical arrays the audit made, for the whole file at once.
        parts = []
        with open_orders(orders) as handle:
            header = handle.header
            for raw in handle.chunks(50_000):
                parts.append(convert(header, raw, formulary))
        good = np.concatenate([p.good() for p in parts])
        cols = {k: np.concatenate([p.columns[k] for p in parts])[good] for k in parts[0].columns}
        arrays = {
            **cols,
            "agent_index": np.concatenate([p.agent_index for p in parts])[good],
            "amount": np.concatenate([p.dose_amount for p in parts])[good],
            "per_kg": np.concatenate([p.dose_per_kg for p in parts])[good],
            "use_watson": np.concatenate([p.use_watson for p in parts])[good],
            "line": np.concatenate([p.line for p in parts])[good],
        }
        arrays["unit_code"] = np.concatenate([p.dose_unit_code for p in parts])[good]
        whole_cases = _merged_cases(parts, good)
        line = arrays["line"]

        with np.errstate(all="ignore"):
            best_floor = min(_timed(lambda: floor(arrays, formulary.agents, formulary.settings, formulary.limits)))
            fl = floor(arrays, formulary.agents, formulary.settings, formulary.limits)

            def engine() -> list:
                figures = compute(whole_cases, formulary.agents, formulary.settings)
                return [figures, evaluate(whole_cases, figures, formulary.agents, formulary.limits, line)]

            best_engine = min(_timed(engine))
            figures, outcomes = engine()
        status = np.zeros(len(line), dtype=int)
        for o in outcomes:
            status = np.maximum(status, o.severity)
        for name in ("tbw_l", "calculated_osmolality", "osmolar_gap", "volume_ml", "projected_sodium", "rate_ml_h"):
            assert np.allclose(fl[name], getattr(figures, name), rtol=1e-9, equal_nan=True), name
        assert np.array_equal(fl["status"], status), "floor and engine disagree on a status"
        bare = _bare_parse(orders)

        sample = []
        with open(orders, newline="", encoding="utf-8") as handle:
            reader = csv.reader(handle)
            next(reader)
            for _, row in zip(range(check_sample), reader, strict=False):
                sample.append(check_fields(header, row))
        start = time.perf_counter()
        for fields in sample:
            with contextlib.suppress(InputError):
                run_check(parse_check_request(fields), formulary)
        per_check = (time.perf_counter() - start) / len(sample)
    return {
        "n": n,
        "whole_s": whole,
        **{f"{k}_s": v for k, v in timings.items()},
        "engine_one_batch_s": best_engine,
        "floor_s": best_floor,
        "bare_parse_s": bare,
        "check_per_row_s": per_check,
        "rss_base_mb": base_rss,
        "rss_peak_mb": peak_rss,
        "file_mb": orders.stat().st_size / 1e6,
    }


def _merged_cases(parts: list, good: np.ndarray) -> object:
    """One Cases for the whole file (the engine as a single batch)."""
    from osmodose.audit.convert import Converted  # noqa: PLC0415

    merged = Converted(
        reasons={},
        columns={k: np.concatenate([p.columns[k] for p in parts]) for k in parts[0].columns},
        agent_text=np.concatenate([p.agent_text for p in parts]),
        agent_index=np.concatenate([p.agent_index for p in parts]),
        mode=np.concatenate([p.mode for p in parts]),
        dose_unit=np.concatenate([p.dose_unit for p in parts]),
        dose_unit_code=np.concatenate([p.dose_unit_code for p in parts]),
        dose_amount=np.concatenate([p.dose_amount for p in parts]),
        dose_per_kg=np.concatenate([p.dose_per_kg for p in parts]),
        shown=lambda _name, _row: "",
        use_watson=np.concatenate([p.use_watson for p in parts]),
        line=np.concatenate([p.line for p in parts]),
    )
    return merged.cases(np.flatnonzero(good))


def _timed(work: object, repeats: int = 3) -> list[float]:
    out = []
    for _ in range(repeats):
        start = time.perf_counter()
        work()  # type: ignore[operator]
        out.append(time.perf_counter() - start)
    return out


def report(results: list[dict[str, float]]) -> str:
    lines = [
        "osmodose audit benchmark (synthetic orders, demo formulary)",
        "",
        f"{'N':>9} {'audit µs/row':>13} {'engine µs/row':>14} {'floor µs/row':>13} "
        f"{'engine/floor':>13} {'1-batch/floor':>14} {'audit/floor':>12} {'audit/(parse+floor)':>20} "
        f"{'check µs/row':>13} {'check/audit':>12} {'peak RSS MB':>12}",
    ]
    for r in results:
        n = r["n"]
        us = 1e6 / n
        lines.append(
            f"{n:>9} {r['whole_s'] * us:>13.2f} {r['engine_s'] * us:>14.3f} {r['floor_s'] * us:>13.3f} "
            f"{r['engine_s'] / r['floor_s']:>13.2f} {r['engine_one_batch_s'] / r['floor_s']:>14.2f} "
            f"{r['whole_s'] / r['floor_s']:>12.1f} {r['whole_s'] / (r['bare_parse_s'] + r['floor_s']):>20.2f} "
            f"{r['check_per_row_s'] * 1e6:>13.0f} {r['check_per_row_s'] * n / r['whole_s']:>12.0f} "
            f"{r['rss_peak_mb']:>12.0f}"
        )
    lines += ["", "audit time by stage (s): read / convert / engine+rules / output+summary, and bare parse"]
    for r in results:
        lines.append(
            f"{r['n']:>9}  {r['read_s']:.2f} / {r['convert_s']:.2f} / {r['engine_s']:.2f} / {r['sinks_s']:.2f}"
            f"   bare parse {r['bare_parse_s']:.2f}   whole {r['whole_s']:.2f}"
            f"   file {r['file_mb']:.0f} MB; RSS after imports {r['rss_base_mb']:.0f} MB,"
            f" audit peak {r['rss_peak_mb']:.0f} MB"
        )
    return "\n".join(lines)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--n", type=int, nargs="*", default=[10**4, 10**5, 10**6])
    parser.add_argument("--check-sample", type=int, default=2000)
    parser.add_argument("--make", type=int, help=argparse.SUPPRESS)
    parser.add_argument("--one", type=int, help=argparse.SUPPRESS)
    parser.add_argument("--file", type=Path, help=argparse.SUPPRESS)
    parser.add_argument("--json", action="store_true", help="print the raw numbers as JSON too")
    args = parser.parse_args(argv)
    if args.make is not None:
        make_orders(args.file, args.make)
        return 0
    if args.one is not None:
        print(json.dumps(measure(args.file, args.one, min(args.check_sample, args.one))))
        return 0
    results = []
    with tempfile.TemporaryDirectory() as folder:
        for n in args.n:
            orders = Path(folder) / f"orders-{n}.csv"
            subprocess.run([sys.executable, __file__, "--make", str(n), "--file", str(orders)], check=True)
            child = [sys.executable, __file__, "--one", str(n), "--check-sample", str(args.check_sample)]
            done = subprocess.run([*child, "--file", str(orders)], capture_output=True, text=True, check=True)
            results.append(json.loads(done.stdout.strip().splitlines()[-1]))
            orders.unlink()
    print(report(results))
    if args.json:
        print(json.dumps(results, indent=1))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
