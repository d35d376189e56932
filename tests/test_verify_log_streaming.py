"""`log verify` streams: its memory does not grow with the log (it once held 607 MB for 20,000 records)."""

from __future__ import annotations

import tracemalloc
from pathlib import Path

from osmodose.cli.main import main
from osmodose.verify.signing import key_path, signer_for_log
from tests.log_build import write_signed_log
from tests.verify_helpers import verify

#: Holding 1,000 records in memory takes about 24 MB (measured with read_log); streaming, well under 1 MB.
RECORDS = 1000
PEAK_LIMIT_BYTES = 2_000_000


def test_log_verify_memory_does_not_grow_with_the_log(tmp_path: Path, demo, capsys) -> None:
    records = [verify(demo, agent="mannitol-20", volume=v, duration="20") for v in ("250", "350", "500")]
    log = tmp_path / "state" / "log.jsonl"
    log.parent.mkdir()
    signer, _made = signer_for_log(key_path(None), log)
    write_signed_log(log, records, RECORDS, signer)
    main(["log", "verify", "--log", str(log), "--no-recompute"])  # warm up: imports and caches are not the log
    capsys.readouterr()
    tracemalloc.start()
    try:
        code = main(["log", "verify", "--log", str(log), "--no-recompute"])
        _now, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    assert code == 0
    assert capsys.readouterr().out.startswith(f"log {log}: {RECORDS} records, chain intact")
    assert peak < PEAK_LIMIT_BYTES, f"peak {peak / 1e6:.1f} MB for {RECORDS} records"
