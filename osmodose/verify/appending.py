"""Appending a signed record to the verification log, only onto a chain that is whole.

Under the log's exclusive lock the whole file is walked first (`log_read`:
one pass, a hash per line, the newest record's signature checked), so a
record is never chained onto an altered, missing or forged one without the
caller saying so; with `append_to_broken_log` it is, and the new entry holds
the problem it was appended past.  An incomplete last line (a write cut
short by a crash) is no reason to refuse: it is moved to `PATH.incomplete`
first, as it always was.  The line goes out in one write, then fsync.
"""

from __future__ import annotations

import os
from pathlib import Path

from osmodose.errors import LogError
from osmodose.storage.bounded import os_reason
from osmodose.storage.durable import fsync_directory
from osmodose.verify.log import BINARY, GENESIS_SHA256, PREFIX, ChainLink, LogEntry, LogProblem, encode_line
from osmodose.verify.log_read import ChainWalker, walk
from osmodose.verify.record import VerificationRecord
from osmodose.verify.signing import Signer, key_path, signer_for_log

try:  # POSIX; elsewhere a second concurrent writer is not excluded.
    import fcntl
except ImportError:  # pragma: no cover - Windows
    fcntl = None  # type: ignore[assignment]

NOT_SAVED = "this verification was not saved"
BROKEN_HINT = "osmodose log verify lists every problem; --append-to-broken-log appends anyway, and the record says so"


def _lock(fd: int) -> None:
    if fcntl is not None:
        fcntl.flock(fd, fcntl.LOCK_EX)


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
        view = view[os.write(fd, view) :]


def _check_fragment(path: Path, fd: int, start: int) -> None:
    """Refuse to cut a file whose unfinished last line is no record: it is probably not a log."""
    os.lseek(fd, start, os.SEEK_SET)
    head = _read_exactly(fd, len(PREFIX))
    if not (head.startswith(PREFIX) or PREFIX.startswith(head)):
        raise LogError(
            path,
            "does not end with a complete record and its last line is no record: "
            f"is it a verification log? ({NOT_SAVED})",
        )


def _set_aside(path: Path, fd: int, start: int) -> None:
    """Move an incomplete last line to PATH.incomplete, then cut the log back to its last complete line."""
    size = os.fstat(fd).st_size
    os.lseek(fd, start, os.SEEK_SET)
    fragment = _read_exactly(fd, size - start)
    side = os.open(f"{path}.incomplete", os.O_WRONLY | os.O_CREAT | os.O_APPEND | BINARY, 0o600)
    try:
        _write_all(side, fragment + b"\n")
        os.fsync(side)
    finally:
        os.close(side)
    os.ftruncate(fd, start)
    os.fsync(fd)


class _Tail:
    """What the walk leaves for the append: the last readable link, and whether the last line was one."""

    def __init__(self) -> None:
        self.link: ChainLink | None = None
        self.last_line_is_record = True
        self.any_line = False

    def __call__(self, line: object, item: ChainLink | LogProblem) -> None:
        self.any_line = True
        if isinstance(item, ChainLink):
            self.link, self.last_line_is_record = item, True
        elif item.kind != "incomplete":
            self.last_line_is_record = False


def append_record(
    path: Path | str, record: VerificationRecord, signer: Signer | None = None, append_to_broken_log: bool = False
) -> tuple[LogEntry, str]:
    """Append `record` as the next entry, signed; returns it and its SHA-256 once it is on disk.

    `signer` is the unit's key (default: the one at `signing.key_path`, made
    on first use).  A broken chain is refused (LogError naming its first
    problem) unless `append_to_broken_log`, and then the entry says so.
    """
    path = Path(path)
    if signer is None:
        signer, _made = signer_for_log(key_path(None), path)
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        created = not path.exists()
        fd = os.open(path, os.O_RDWR | os.O_CREAT | os.O_APPEND | BINARY, 0o600)
    except OSError as error:
        raise LogError(path, f"cannot be opened: {os_reason(error)}") from None
    try:
        _lock(fd)
        walker = ChainWalker(signer.checker())
        tail = _Tail()
        with os.fdopen(os.dup(fd), "rb") as handle:
            complete_end = walk(handle, walker, each=tail)
        walker.finish()
        if os.fstat(fd).st_size > complete_end:
            _check_fragment(path, fd, complete_end)
        if tail.any_line and not tail.last_line_is_record and not append_to_broken_log:
            raise LogError(
                path,
                "its last record is damaged or altered, so the chain cannot be continued "
                f"(run osmodose log verify; {NOT_SAVED})",
            )
        problems = [p for p in walker.problems if p.kind != "incomplete"]
        if problems and not append_to_broken_log:
            raise LogError(path, f"its chain is broken: {problems[0].message} ({NOT_SAVED}; {BROKEN_HINT})")
        if os.fstat(fd).st_size > complete_end:
            _set_aside(path, fd, complete_end)
        last = tail.link
        sequence, previous = (1, GENESIS_SHA256) if last is None else (last.sequence + 1, last.sha256)
        entry = LogEntry(
            sequence=sequence,
            previous_sha256=previous,
            signed_by=signer.key_id,
            appended_to_broken_log=problems[0].message if problems else None,
            record=record,
        )
        digest, line = encode_line(entry, signer.sign)
        _write_all(fd, line)
        os.fsync(fd)
    except OSError as error:
        raise LogError(path, f"cannot be written: {os_reason(error)} ({NOT_SAVED})") from None
    finally:
        os.close(fd)
    if created:
        fsync_directory(path.parent)
    return entry, digest
