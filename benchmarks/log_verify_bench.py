"""`osmodose log verify` on a long signed log: wall time and peak memory, against floors from the same run.

Builds a log of N signed records (default 20,000; invented orders, 40
distinct verifications so the recomputation is not of one record over and
over), then runs as separate processes and reports median wall time and
peak resident memory (the operating system's accounting of each finished
child process) of:

* the floor: a bare interpreter that imports the verification modules and
  reads the file line by line, hashing each line (SHA-256) — what any
  chain check must at least do;
* `log verify --no-recompute`: chain, signatures, decisions re-derived;
* `log verify`: the same, plus each check recomputed from its stored inputs;
* for comparison, `read_log`, which holds every record in memory as
  `log verify` did before it streamed.

Usage: python benchmarks/log_verify_bench.py [N] [RUNS]
"""

from __future__ import annotations

import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from osmodose.formulary import demo_formulary_path, load_formulary  # noqa: E402
from osmodose.verify.signing import init_key  # noqa: E402
from tests.log_build import write_signed_log  # noqa: E402
from tests.verify_helpers import verify  # noqa: E402

IN_MEMORY = """
import sys
from osmodose.verify import read_log, verify_chain
verify_chain(read_log(sys.argv[1]))
"""

FLOOR = """
import hashlib, sys
import osmodose.verify.log_read, osmodose.verify.recheck
with open(sys.argv[1], "rb") as handle:
    for line in handle:
        hashlib.sha256(line).hexdigest()
"""


def build(folder: Path, count: int) -> tuple[Path, Path]:
    formulary = load_formulary(demo_formulary_path())
    records = [
        verify(formulary, agent=agent, volume=volume, duration="20")
        for agent, volume in [("mannitol-20", v) for v in ("250", "350", "500", "700")] * 5
        + [("nacl-3", v) for v in ("100", "150", "200", "250")] * 5
    ]
    records = [r.model_copy(update={"timestamp": f"2026-12-02T08:{i:02d}:00+01:00"}) for i, r in enumerate(records)]
    key = folder / "keys" / "log-signing.key"
    signer = init_key(key)
    log = folder / "state" / "log.jsonl"
    log.parent.mkdir()
    write_signed_log(log, records, count, signer)
    return log, key


def measure(command: list[str], env: dict[str, str], runs: int) -> tuple[float, float, int]:
    """(median wall s, largest peak RSS MB of one run, exit status); one warm-up run first."""
    times, peaks = [], []
    status = 0
    for i in range(runs + 1):
        start = time.perf_counter()
        child = subprocess.Popen(command, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        _pid, wait_status, usage = os.wait4(child.pid, 0)  # this child's own accounting
        elapsed = time.perf_counter() - start
        child.returncode = status = os.waitstatus_to_exitcode(wait_status)
        if i:
            times.append(elapsed)
            peaks.append(usage.ru_maxrss / 1024)  # kB on Linux
    return statistics.median(times), max(peaks), status


def main() -> None:
    count = int(sys.argv[1]) if len(sys.argv) > 1 else 20_000
    runs = int(sys.argv[2]) if len(sys.argv) > 2 else 3
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        log, key = build(folder, count)
        env = dict(os.environ, PYTHONPATH=str(ROOT), OSMODOSE_LOG_KEY=str(key))
        print(f"log: {count} records, {log.stat().st_size / 1e6:.1f} MB")
        floor = measure([sys.executable, "-c", FLOOR, str(log)], env, runs)
        rows = [("floor: read and hash each line", floor)]
        for label, extra in (("log verify --no-recompute", ["--no-recompute"]), ("log verify", [])):
            result = measure([sys.executable, "-m", "osmodose", "log", "verify", "--log", str(log), *extra], env, runs)
            rows.append((label, result))
        rows.append(
            ("in memory (read_log), for comparison", measure([sys.executable, "-c", IN_MEMORY, str(log)], env, runs))
        )
        print(f"{'':36} {'wall s':>8} {'x floor':>8} {'peak MB':>8} {'exit':>5}")
        for label, (wall, peak, status) in rows:
            print(f"{label:36} {wall:8.2f} {wall / floor[0]:8.1f} {peak:8.0f} {status:5}")


if __name__ == "__main__":
    main()
