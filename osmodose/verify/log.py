"""The verification log: JSON Lines, append-only, each line chained to the one before.

One line per record:

    {"sha256":"<hex>","entry":{"sequence":N,"previous_sha256":"<hex>","record":{...}}}

`sha256` is the SHA-256 of the exact bytes of the `entry` object as stored;
`previous_sha256` is the `sha256` of the record before (64 zeros for the
first).  Editing a record breaks its own hash; deleting one leaves a gap in
the sequence; re-hashing an edit breaks the next record's link.  Deleting the
newest records cannot be seen from the file alone: note the SHA-256 printed
after a verification (in the chart) and check it with `log verify --expect`.

Durability: each line goes out in one write on a file opened for append,
then fsync, under an exclusive lock; a kill or crash leaves every earlier
line whole and at most the last one cut short.  The reader reports a cut
last line instead of failing on it; the next append moves it to
`PATH.incomplete` (kept for inspection) before writing, so a new record is
never glued onto a fragment.
"""

from __future__ import annotations

import hashlib
import os
import re
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from pydantic import BaseModel, ConfigDict, ValidationError

from osmodose.errors import LogError
from osmodose.storage.durable import fsync_directory
from osmodose.verify.record import VerificationRecord

try:  # POSIX; elsewhere a second concurrent writer is not excluded.
    import fcntl
except ImportError:  # pragma: no cover - Windows
    fcntl = None  # type: ignore[assignment]  # the module's stub has no None; writers check for it

GENESIS_SHA256 = "0" * 64
_PREFIX = b'{"sha256":"'
_LINE = re.compile(rb'^\{"sha256":"([0-9a-f]{64})","entry":(\{.*\})\}$')
_CHUNK = 1 << 16
#: Windows translates newlines in files opened without O_BINARY; the hashes are of exact bytes.
_BINARY = getattr(os, "O_BINARY", 0)


class LogEntry(BaseModel):
    """One record in its place in the chain."""

    model_config = ConfigDict(frozen=True)

    sequence: int
    previous_sha256: str
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
            "record": record.to_json(),
        }

    def render_saved(self, sha256: str, path: Path | str) -> str:
        """The record as `osmodose verify` prints it once saved, with where and under which SHA-256."""
        return (
            self.record.render_text()
            + f"saved as record {self.sequence} in {path}\n"
            + f"record sha256 {sha256} (note it in the chart: osmodose log verify --expect checks it)\n"
        )


@dataclass(frozen=True)
class StoredEntry:
    """A line read back: where it stands, its stored hash and the entry."""

    line: int
    sha256: str
    entry: LogEntry
    hash_ok: bool

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
    kind: str  # damaged, altered, missing, out-of-order, incomplete, not-found
    message: str


@dataclass
class LogReadout:
    """Everything read from a log: the readable entries and every problem, in file order."""

    path: Path
    entries: list[StoredEntry] = field(default_factory=list)
    problems: list[LogProblem] = field(default_factory=list)
    lines: int = 0

    def by_sequence(self, sequence: int) -> StoredEntry | None:
        return next((e for e in self.entries if e.entry.sequence == sequence), None)


def encode_line(entry: LogEntry) -> tuple[str, bytes]:
    """The entry's hash and its line (with the newline)."""
    body = entry.model_dump_json().encode("utf-8")
    digest = hashlib.sha256(body).hexdigest()
    return digest, b'{"sha256":"' + digest.encode("ascii") + b'","entry":' + body + b"}\n"


def _decode_line(number: int, raw: bytes) -> StoredEntry | LogProblem:
    match = _LINE.match(raw)
    if match is None:
        return LogProblem(number, "damaged", f"line {number} is not a complete record (damaged or cut)")
    stored, body = match.group(1).decode("ascii"), match.group(2)
    try:
        entry = LogEntry.model_validate_json(body)
    except ValidationError:
        return LogProblem(number, "damaged", f"line {number} is not a readable record (damaged or edited)")
    return StoredEntry(number, stored, entry, hashlib.sha256(body).hexdigest() == stored)


def read_log(path: Path | str) -> LogReadout:
    """Read every line; never raises for damaged content, only for a file that cannot be read."""
    path = Path(path)
    try:
        data = path.read_bytes()
    except FileNotFoundError:
        raise LogError(path, "does not exist (no verification has been saved there)") from None
    except OSError as error:
        raise LogError(path, f"cannot be read: {error.strerror or type(error).__name__}") from None
    readout = LogReadout(path)
    if not data:
        return readout
    parts = data.split(b"\n")
    tail = parts.pop()  # after the last newline: b"" when the file ends cleanly
    for number, raw in enumerate(parts, start=1):
        decoded = _decode_line(number, raw)
        if isinstance(decoded, LogProblem):
            readout.problems.append(decoded)
        else:
            readout.entries.append(decoded)
    readout.lines = len(parts)
    if tail:
        number = len(parts) + 1
        readout.lines = number
        readout.problems.append(
            LogProblem(
                number,
                "incomplete",
                f"line {number} (the last) is incomplete: a write was interrupted or the file was cut; "
                "the records before it are not affected",
            )
        )
    return readout


@dataclass(frozen=True)
class ChainReport:
    """The verdict on a log: intact or not, the first problem, and the newest record."""

    path: Path
    records: int
    problems: list[LogProblem]
    head: StoredEntry | None

    @property
    def intact(self) -> bool:
        return not self.problems

    @property
    def first_problem(self) -> LogProblem | None:
        return self.problems[0] if self.problems else None


def verify_chain(readout: LogReadout, expect_sha256: str | None = None) -> ChainReport:
    """Walk the chain; every problem in file order, the first one naming the first bad record."""
    problems: list[LogProblem] = []
    items: list[StoredEntry | LogProblem] = sorted([*readout.entries, *readout.problems], key=lambda x: x.line)
    expected_sequence = 1
    previous: str | None = GENESIS_SHA256  # None: unknown after a damaged line
    previous_line = 0
    for item in items:
        if isinstance(item, LogProblem):
            problems.append(item)
            if item.kind != "incomplete":
                previous = None
                expected_sequence = -1
            continue
        entry = item.entry
        seq = entry.sequence
        if expected_sequence != -1 and seq > expected_sequence:
            missing = (
                f"record {expected_sequence}"
                if seq == expected_sequence + 1
                else (f"records {expected_sequence} to {seq - 1}")
            )
            problems.append(LogProblem(item.line, "missing", f"{missing} missing: line {item.line} holds record {seq}"))
        elif expected_sequence != -1 and seq < expected_sequence:
            problems.append(
                LogProblem(
                    item.line,
                    "out-of-order",
                    f"line {item.line} holds record {seq} again or out of place (expected record {expected_sequence})",
                )
            )
        elif not item.hash_ok:
            problems.append(
                LogProblem(
                    item.line,
                    "altered",
                    f"record {seq} (line {item.line}) was altered: it no longer matches its SHA-256",
                )
            )
        elif previous is not None and entry.previous_sha256 != previous:
            problems.append(
                LogProblem(
                    previous_line,
                    "altered",
                    f"record {seq - 1} (line {previous_line}) was altered: record {seq} (line {item.line}) "
                    "holds a different SHA-256 for it",
                )
            )
        expected_sequence = seq + 1
        previous = item.sha256
        previous_line = item.line
    head = readout.entries[-1] if readout.entries else None
    if expect_sha256 is not None:
        wanted = expect_sha256.strip().lower()
        if not any(e.sha256 == wanted for e in readout.entries):
            problems.append(
                LogProblem(
                    readout.lines,
                    "not-found",
                    f"no record has SHA-256 {wanted}: it, or records after it, were removed or altered",
                )
            )
    problems.sort(key=lambda p: p.line)
    return ChainReport(readout.path, len(readout.entries), problems, head)


def _lock(fd: int) -> None:
    if fcntl is not None:
        fcntl.flock(fd, fcntl.LOCK_EX)


def _tail(fd: int) -> tuple[int, bytes | None]:
    """(end of the last complete line, that line's bytes without the newline, or None)."""
    size = os.fstat(fd).st_size
    buffer = b""
    position = size
    while position > 0:
        step = min(_CHUNK, position)
        position -= step
        os.lseek(fd, position, os.SEEK_SET)
        buffer = _read_exactly(fd, step) + buffer
        last = buffer.rfind(b"\n")
        if last == -1:
            continue
        before = buffer.rfind(b"\n", 0, last)
        if before != -1 or position == 0:
            complete_end = position + last + 1
            return complete_end, buffer[before + 1 : last]
    return 0, None


def _read_exactly(fd: int, count: int) -> bytes:
    chunks = []
    while count > 0:
        chunk = os.read(fd, count)
        if not chunk:
            break
        chunks.append(chunk)
        count -= len(chunk)
    return b"".join(chunks)


def _write_all(fd: int, data: bytes) -> None:
    view = memoryview(data)
    while view:
        written = os.write(fd, view)
        view = view[written:]


def _check_fragment(path: Path, fd: int, start: int) -> None:
    """Refuse to cut a file whose unfinished last line is no record: it is probably not a log."""
    os.lseek(fd, start, os.SEEK_SET)
    head = _read_exactly(fd, len(_PREFIX))
    if not (head.startswith(_PREFIX) or _PREFIX.startswith(head)):
        raise LogError(
            path,
            "does not end with a complete record and its last line is no record: "
            "is it a verification log? (this verification was not saved)",
        )


def _set_aside(path: Path, fd: int, start: int) -> None:
    """Move an incomplete last line to PATH.incomplete, then cut the log back to its last complete line."""
    size = os.fstat(fd).st_size
    os.lseek(fd, start, os.SEEK_SET)
    fragment = _read_exactly(fd, size - start)
    side = os.open(f"{path}.incomplete", os.O_WRONLY | os.O_CREAT | os.O_APPEND | _BINARY, 0o600)
    try:
        _write_all(side, fragment + b"\n")
        os.fsync(side)
    finally:
        os.close(side)
    os.ftruncate(fd, start)
    os.fsync(fd)


def append_record(path: Path | str, record: VerificationRecord) -> tuple[LogEntry, str]:
    """Append `record` as the next entry; returns it and its SHA-256 once it is on disk."""
    path = Path(path)
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        created = not path.exists()
        fd = os.open(path, os.O_RDWR | os.O_CREAT | os.O_APPEND | _BINARY, 0o600)
    except OSError as error:
        raise LogError(path, f"cannot be opened: {error.strerror or type(error).__name__}") from None
    try:
        _lock(fd)
        complete_end, last = _tail(fd)
        if os.fstat(fd).st_size > complete_end:
            _check_fragment(path, fd, complete_end)
            _set_aside(path, fd, complete_end)
        if last is None:
            sequence, previous = 1, GENESIS_SHA256
        else:
            decoded = _decode_line(0, last)
            if isinstance(decoded, LogProblem) or not decoded.hash_ok:
                raise LogError(
                    path,
                    "its last record is damaged or altered, so the chain cannot be continued "
                    "(run osmodose log verify; this verification was not saved)",
                )
            sequence, previous = decoded.entry.sequence + 1, decoded.sha256
        entry = LogEntry(sequence=sequence, previous_sha256=previous, record=record)
        digest, line = encode_line(entry)
        _write_all(fd, line)
        os.fsync(fd)
    except OSError as error:
        raise LogError(
            path, f"cannot be written: {error.strerror or type(error).__name__} (this verification was not saved)"
        ) from None
    finally:
        os.close(fd)
    if created:
        fsync_directory(path.parent)
    return entry, digest
