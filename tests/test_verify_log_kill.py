"""A writer killed with SIGKILL at random moments never costs a completed record.

Each of 20 rounds forks a writer that appends records as fast as it can and
reports each sequence number on a pipe only after `append_record` returned
(the line written and fsync'd); the test kills it after a few milliseconds
and checks that every reported record is in the log, readable and chained.
Some rounds also leave a torn line, as a power cut would, before the next
writer starts: the next append must set it aside and go on.
"""

from __future__ import annotations

import os
import random
import signal
import sys
import time

import pytest

from osmodose.verify import append_record, read_log, verify_chain
from tests.verify_helpers import verify

ROUNDS = 20

pytestmark = pytest.mark.skipif(not hasattr(os, "fork") or sys.platform == "win32", reason="needs fork and SIGKILL")


def _writer(path: str, record, ack: int) -> None:  # type: ignore[no-untyped-def]
    """The child: append forever, acknowledging each record once it is on disk."""
    try:
        while True:
            entry, _digest = append_record(path, record)
            os.write(ack, f"{entry.sequence}\n".encode())
    finally:
        os._exit(0)


def test_sigkill_of_a_writer_loses_no_completed_record(demo, tmp_path) -> None:
    record = verify(demo, agent="nacl-23.4", volume="30", duration="15", line="central")
    path = str(tmp_path / "log.jsonl")
    rng = random.Random(20261202)
    acknowledged: list[int] = []
    started = time.monotonic()
    for round_number in range(ROUNDS):
        read_end, write_end = os.pipe()
        pid = os.fork()
        if pid == 0:  # pragma: no cover - runs in the child
            os.close(read_end)
            _writer(path, record, write_end)
        os.close(write_end)
        time.sleep(rng.uniform(0.005, 0.05))
        os.kill(pid, signal.SIGKILL)
        os.waitpid(pid, 0)
        with os.fdopen(read_end, "rb") as pipe:
            acknowledged += [int(x) for x in pipe.read().split()]
        readout = read_log(path) if os.path.exists(path) else None
        if readout is not None:
            report = verify_chain(readout)
            # At most the last line is incomplete; nothing else is wrong.
            assert all(p.kind == "incomplete" for p in report.problems), report.problems
            assert all(p.line == readout.lines for p in report.problems)
            have = {e.entry.sequence for e in readout.entries}
            assert set(acknowledged) <= have, f"round {round_number}: acknowledged records lost"
            if round_number % 4 == 3:
                # A torn line, as a power cut mid-write would leave.
                with open(path, "ab") as handle:
                    handle.write(b'{"sha256":"00ff","entry":{"seq')
        assert time.monotonic() - started < 60, "the kill loop took too long"
    # A last clean append after all the kills: the whole chain verifies.
    append_record(path, record)
    readout = read_log(path)
    report = verify_chain(readout)
    assert report.intact, report.problems
    sequences = [e.entry.sequence for e in readout.entries]
    assert sequences == list(range(1, len(sequences) + 1))
    assert set(acknowledged) <= set(sequences)
    assert len(acknowledged) > 0
