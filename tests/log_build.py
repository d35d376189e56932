"""Building long signed logs quickly, for the streaming test and the benchmark (invented orders)."""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path

from osmodose.verify.log import GENESIS_SHA256, LogEntry, encode_line
from osmodose.verify.record import VerificationRecord
from osmodose.verify.signing import Signer


def write_signed_log(path: Path, records: Sequence[VerificationRecord], count: int, signer: Signer) -> str:
    """`count` chained, signed entries cycling through `records`, as `append_record` writes them; the last SHA-256.

    Written in one pass (no walk before each append), so a long log takes
    seconds to make rather than the minutes a verification per record would.
    """
    previous = GENESIS_SHA256
    with path.open("wb") as handle:
        for i in range(count):
            entry = LogEntry(
                sequence=i + 1,
                previous_sha256=previous,
                signed_by=signer.key_id,
                record=records[i % len(records)],
            )
            previous, line = encode_line(entry, signer.sign)
            handle.write(line)
    return previous
