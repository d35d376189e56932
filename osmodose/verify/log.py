"""The verification log: JSON Lines, append-only, each line chained to the one before and signed.

One line per record:

    {"sha256":"<hex>","signature":"<hex>","entry":{"sequence":N,"previous_sha256":"<hex>",
     "signed_by":"<key id>","appended_to_broken_log":null,"record":{...}}}

`sha256` is the SHA-256 of the exact bytes of the `entry` object as stored;
`previous_sha256` is the `sha256` of the record before (64 zeros for the
first); `signature` is the Ed25519 signature of those same bytes by the
unit's key (`signing`), whose short id is `signed_by`.  Editing a record
breaks its own hash; deleting one leaves a gap in the sequence; re-hashing an
edit breaks the next record's link, and re-hashing every record after it
breaks their signatures, which cannot be remade without the key.  Deleting
the newest records cannot be seen from the file alone: note the SHA-256
printed after a verification and check it with `log verify --expect`.
Lines written before records were signed have no `signature` and no
`signed_by`; they still read and verify, reported as unsigned.

Durability: each line goes out in one write on a file opened for append,
then fsync, under an exclusive lock; a kill or crash leaves every earlier
line whole and at most the last one cut short.  The reader reports a cut
last line instead of failing on it; the next append moves it to
`PATH.incomplete` (kept for inspection) before writing, so a new record is
never glued onto a fragment.  Before appending, the whole chain is walked
(`log_read`): a record is never chained onto a broken log unless the caller
says so, and then the new entry records the problem it was appended past
(`appending`).  Reading and walking the chain is `log_read`.
"""

from __future__ import annotations

import hashlib
import os
import re
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from pydantic import BaseModel, ConfigDict, ValidationError

from osmodose.verify.record import VerificationRecord

GENESIS_SHA256 = "0" * 64
PREFIX = b'{"sha256":"'
_LINE = re.compile(rb'^\{"sha256":"([0-9a-f]{64})"(?:,"signature":"([0-9a-f]{128})")?,"entry":(\{.*\})\}$', re.DOTALL)
#: Windows translates newlines in files opened without O_BINARY; the hashes are of exact bytes.
BINARY = getattr(os, "O_BINARY", 0)


class LogEntry(BaseModel):
    """One record in its place in the chain."""

    model_config = ConfigDict(frozen=True)

    sequence: int
    previous_sha256: str
    signed_by: str | None = None
    """Id of the key that signed this entry (16 hex characters); none in a log written before signing."""
    appended_to_broken_log: str | None = None
    """The chain's first problem when this record was appended past it (`--append-to-broken-log`)."""
    record: VerificationRecord

    def to_json(self, sha256: str, **where: object) -> dict[str, Any]:
        """What `verify --json` and `log show --json` print: the decision on top, then the chain and the record.

        `where` adds what the caller knows about the stored line (`log`, the
        file it was appended to; `hash_ok`, whether it still matches its hash).
        """
        record = self.record
        return {
            "status": record.status,
            "decision": record.outcome,
            **where,
            "sequence": self.sequence,
            "sha256": sha256,
            "previous_sha256": self.previous_sha256,
            "signed_by": self.signed_by,
            "appended_to_broken_log": self.appended_to_broken_log,
            "record": record.to_json(),
        }

    def render_saved(self, sha256: str, path: Path | str) -> str:
        """The record as `osmodose verify` prints it once saved, with where and under which SHA-256."""
        broken = self.appended_to_broken_log
        return (
            self.record.render_text()
            + (f"appended to a log whose chain is broken: {broken}\n" if broken else "")
            + f"saved as record {self.sequence} in {path}\n"
            + f"record sha256 {sha256} (note it in the chart: osmodose log verify --expect checks it)\n"
        )


@dataclass(frozen=True)
class ChainLink:
    """A line read back: its place, its hashes, its signature, and the entry."""

    line: int
    sha256: str
    sequence: int
    previous_sha256: str
    hash_ok: bool
    signature: str | None
    signed_by: str | None
    body: bytes
    entry: LogEntry


@dataclass(frozen=True)
class StoredEntry:
    """A line read back in full: where it stands, its stored hash and signature, and the entry."""

    line: int
    sha256: str
    entry: LogEntry
    hash_ok: bool
    signature: str | None = None

    def to_json(self) -> dict[str, Any]:
        """What `log show --json` prints."""
        return self.entry.to_json(self.sha256, hash_ok=self.hash_ok)

    def render_text(self, path: Path | str) -> str:
        """What `log show` prints: where the record stands, its hashes, a warning if altered, the record."""
        entry = self.entry
        lines = [f"record {entry.sequence} of log {path}", f"sha256 {self.sha256}   previous {entry.previous_sha256}"]
        if not self.hash_ok:
            lines.append("ALTERED: this record no longer matches its SHA-256; it was changed after it was saved")
        return "\n".join([*lines, "", entry.record.render_text()])


@dataclass(frozen=True)
class LogProblem:
    """Something wrong in the log, with the line it was found at."""

    line: int
    kind: str  # damaged, altered, missing, out-of-order, incomplete, not-found, signature, unsigned, decision
    message: str


def encode_line(entry: LogEntry, signature_of: Callable[[bytes], str] | None = None) -> tuple[str, bytes]:
    """The entry's hash and its line (with the newline); `signature_of(body) -> hex` signs it."""
    body = entry.model_dump_json().encode("utf-8")
    digest = hashlib.sha256(body).hexdigest()
    signed = b""
    if signature_of is not None:
        signed = b',"signature":"' + signature_of(body).encode("ascii") + b'"'
    return digest, b'{"sha256":"' + digest.encode("ascii") + b'"' + signed + b',"entry":' + body + b"}\n"


def decode_link(number: int, raw: bytes) -> ChainLink | LogProblem:
    """One line (without its newline) read in full: its hashes, its signature, and the entry validated.

    A line whose hashes are right but whose entry is no record (built to
    pass a chain check) is as damaged as a line cut in half.
    """
    match = _LINE.match(raw)
    if match is None:
        return LogProblem(number, "damaged", f"line {number} is not a complete record (damaged or cut)")
    stored, signature, body = match.group(1).decode("ascii"), match.group(2), match.group(3)
    try:
        entry = LogEntry.model_validate_json(body)
    except ValidationError:
        return LogProblem(number, "damaged", f"line {number} is not a readable record (damaged or edited)")
    return ChainLink(
        line=number,
        sha256=stored,
        sequence=entry.sequence,
        previous_sha256=entry.previous_sha256,
        hash_ok=hashlib.sha256(body).hexdigest() == stored,
        signature=signature.decode("ascii") if signature else None,
        signed_by=entry.signed_by,
        body=body,
        entry=entry,
    )


def stored_entry(link: ChainLink) -> StoredEntry:
    """A link as a StoredEntry (the in-memory reader's form)."""
    return StoredEntry(link.line, link.sha256, link.entry, link.hash_ok, link.signature)
