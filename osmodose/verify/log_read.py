"""Reading the verification log back, one line at a time, and walking its chain.

The log only grows, so nothing here holds it whole: lines are read one by one
(none longer than `MAX_LINE_BYTES`, so a damaged file cannot exhaust memory
either), each is checked against the one before (`ChainWalker`), and only
the verdict and the problems are kept.  `walk_log` is what `log verify`,
`log list` and the check before each append use; `read_log` and
`verify_chain` keep every entry in memory, for tests and small tools.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
from dataclasses import dataclass, field
from pathlib import Path
from typing import BinaryIO

from osmodose.errors import InputError, LogError
from osmodose.storage.bounded import FileRefused, open_regular, os_reason
from osmodose.verify.log import GENESIS_SHA256, ChainLink, LogProblem, StoredEntry, decode_link, stored_entry
from osmodose.verify.signing import Checker

#: A record is a few kB; a line this long is damage, read past in pieces, never held whole.
MAX_LINE_BYTES = 1_000_000
_PIECE = 1 << 16
EXPECT_ACCEPTED = "a record's SHA-256, or its first 12 or more hex characters (as log list prints them)"


def parse_expect(raw: str | None) -> str | None:
    """The hash (or prefix of one) given to --expect, lower case; InputError for anything else."""
    if raw is None:
        return None
    text = raw.strip().lower()
    if not (12 <= len(text) <= 64) or any(c not in "0123456789abcdef" for c in text):
        raise InputError("expect", raw, "is not a SHA-256 or the start of one", EXPECT_ACCEPTED)
    return text


@dataclass(frozen=True)
class _Line:
    number: int
    raw: bytes | None  # None: longer than MAX_LINE_BYTES
    complete: bool  # ends with a newline
    end: int  # byte offset just after it


def _lines(handle: BinaryIO) -> Iterator[_Line]:
    number, offset = 0, 0
    while True:
        raw = handle.readline(MAX_LINE_BYTES + 1)
        if not raw:
            return
        number += 1
        offset += len(raw)
        if raw.endswith(b"\n"):
            yield _Line(number, raw[:-1], True, offset)
            continue
        if len(raw) <= MAX_LINE_BYTES:  # the end of the file, without a newline
            yield _Line(number, raw, False, offset)
            return
        while True:  # far too long: skip to the end of this line without keeping it
            piece = handle.readline(_PIECE)
            offset += len(piece)
            if not piece or piece.endswith(b"\n"):
                break
        yield _Line(number, None, bool(piece), offset)
        if not piece:
            return


def _items(handle: BinaryIO) -> Iterator[tuple[_Line, ChainLink | LogProblem]]:
    for line in _lines(handle):
        if not line.complete:
            yield (
                line,
                LogProblem(
                    line.number,
                    "incomplete",
                    f"line {line.number} (the last) is incomplete: a write was interrupted or the file was cut; "
                    "the records before it are not affected",
                ),
            )
        elif line.raw is None:
            yield (
                line,
                LogProblem(
                    line.number, "damaged", f"line {line.number} is far longer than any record: damaged or not a log"
                ),
            )
        else:
            yield line, decode_link(line.number, line.raw)


class ChainWalker:
    """Judges each line against the one before; problems in file order, the first naming the first bad record."""

    def __init__(self, checker: Checker | None = None, expect: str | None = None) -> None:
        self.checker = checker
        self.expect = expect
        self.expect_found = False
        self.problems: list[LogProblem] = []
        self.records = 0
        self.lines = 0
        self.signed = 0
        self.unsigned = 0
        self.head: ChainLink | None = None
        self._expected_sequence = 1
        self._previous: str | None = GENESIS_SHA256  # None: unknown after a damaged line
        self._previous_line = 0

    def feed(self, item: ChainLink | LogProblem) -> list[LogProblem]:
        """Judge one line; returns the problems it adds."""
        before = len(self.problems)
        self.lines = max(self.lines, item.line)
        if isinstance(item, LogProblem):
            self.problems.append(item)
            if item.kind != "incomplete":
                self._previous = None
                self._expected_sequence = -1
            return self.problems[before:]
        self.records += 1
        self.head = item
        if self.expect is not None and item.sha256.startswith(self.expect):
            self.expect_found = True
        problem = self._chain_problem(item) or self._signature_problem(item)
        if problem is not None:
            self.problems.append(problem)
        self._expected_sequence = item.sequence + 1
        self._previous = item.sha256
        self._previous_line = item.line
        return self.problems[before:]

    def _chain_problem(self, item: ChainLink) -> LogProblem | None:
        seq, expected = item.sequence, self._expected_sequence
        if expected != -1 and seq > expected:
            missing = f"record {expected}" if seq == expected + 1 else f"records {expected} to {seq - 1}"
            return LogProblem(item.line, "missing", f"{missing} missing: line {item.line} holds record {seq}")
        if expected != -1 and seq < expected:
            return LogProblem(
                item.line,
                "out-of-order",
                f"line {item.line} holds record {seq} again or out of place (expected record {expected})",
            )
        if not item.hash_ok:
            return LogProblem(
                item.line, "altered", f"record {seq} (line {item.line}) was altered: it no longer matches its SHA-256"
            )
        if self._previous is not None and item.previous_sha256 != self._previous:
            return LogProblem(
                self._previous_line,
                "altered",
                f"record {seq - 1} (line {self._previous_line}) was altered: record {seq} (line {item.line}) "
                "holds a different SHA-256 for it",
            )
        return None

    def _signature_problem(self, item: ChainLink) -> LogProblem | None:
        problem = signature_problem(item, self.checker, signed_before=self.signed > 0)
        if item.signature is None:
            self.unsigned += 1
        else:
            self.signed += 1
        return problem

    def finish(self) -> None:
        if self.expect is not None and not self.expect_found:
            self.problems.append(
                LogProblem(
                    self.lines,
                    "not-found",
                    f"no record has SHA-256 {self.expect}{'' if len(self.expect) == 64 else '...'}: "
                    "it, or records after it, were removed or altered",
                )
            )
        self.problems.sort(key=lambda p: p.line)


def signature_problem(item: ChainLink, checker: Checker | None, signed_before: bool = False) -> LogProblem | None:
    """What is wrong with a line's signature: missing after signed records, another key's, or forged."""
    where = f"record {item.sequence} (line {item.line})"
    if item.signature is None:
        if signed_before:
            return LogProblem(
                item.line,
                "unsigned",
                f"{where} is not signed, but records before it are: once a log is signed every record is",
            )
        return None
    if checker is None:
        return None
    if item.signed_by != checker.key_id:
        return LogProblem(
            item.line,
            "signature",
            f"{where} says it was signed by key {item.signed_by}, not by the unit's key {checker.key_id}",
        )
    if not checker.check(item.body, item.signature):
        return LogProblem(
            item.line,
            "signature",
            f"{where} has a signature the unit's key does not match: it was written or changed without the key",
        )
    return None


def find_record(path: Path | str, sequence: int) -> tuple[ChainLink | None, int]:
    """Record `sequence` read in full (None when absent), and the last record number seen before it or the end."""
    path = Path(path)
    last = 0
    try:
        with open_log(path) as handle:
            for _line, item in _items(handle):
                if isinstance(item, ChainLink):
                    if item.sequence == sequence:
                        return item, last
                    last = item.sequence
    except OSError as error:
        raise LogError(path, f"cannot be read: {os_reason(error)}") from None
    return None, last


@dataclass(frozen=True)
class ChainReport:
    """The verdict on a log: intact or not, the first problem, the newest record, and who signed."""

    path: Path
    records: int
    problems: list[LogProblem]
    head: ChainLink | None
    signed: int = 0
    unsigned: int = 0
    checker: Checker | None = None
    notes: list[str] = field(default_factory=list)

    @property
    def intact(self) -> bool:
        return not self.problems

    @property
    def first_problem(self) -> LogProblem | None:
        return self.problems[0] if self.problems else None


def open_log(path: Path) -> BinaryIO:
    """The log opened for reading; LogError when it is missing, unreadable or no regular file."""
    try:
        return open_regular(path)
    except FileNotFoundError:
        raise LogError(path, "does not exist (no verification has been saved there)") from None
    except FileRefused as refused:
        raise LogError(path, refused.problem) from None
    except OSError as error:
        raise LogError(path, f"cannot be read: {os_reason(error)}") from None


def walk(
    handle: BinaryIO,
    walker: ChainWalker,
    each: Callable[[_Line, ChainLink | LogProblem], None] | None = None,
) -> int:
    """Feed every line of `handle` to `walker`; returns the offset just after the last complete line."""
    complete_end = 0
    for line, item in _items(handle):
        walker.feed(item)
        if line.complete:
            complete_end = line.end
        if each is not None:
            each(line, item)
    return complete_end


def walk_log(
    path: Path | str,
    checker: Checker | None = None,
    expect: str | None = None,
    each: Callable[[ChainLink | LogProblem], list[LogProblem]] | None = None,
) -> ChainReport:
    """Walk the whole log at `path` in one pass; `each` may judge every line further (and add problems)."""
    path = Path(path)
    walker = ChainWalker(checker, expect)
    extra: list[LogProblem] = []

    def judge(_line: _Line, item: ChainLink | LogProblem) -> None:
        if each is not None:
            extra.extend(each(item))

    try:
        with open_log(path) as handle:
            walk(handle, walker, judge)
    except OSError as error:
        raise LogError(path, f"cannot be read: {os_reason(error)}") from None
    walker.problems.extend(extra)
    walker.finish()
    return ChainReport(path, walker.records, walker.problems, walker.head, walker.signed, walker.unsigned, checker)


@dataclass
class LogReadout:
    """Everything read from a log, in memory: the readable entries and every problem, in file order."""

    path: Path
    entries: list[StoredEntry] = field(default_factory=list)
    problems: list[LogProblem] = field(default_factory=list)
    lines: int = 0
    links: list[ChainLink] = field(default_factory=list)

    def by_sequence(self, sequence: int) -> StoredEntry | None:
        return next((e for e in self.entries if e.entry.sequence == sequence), None)


def read_log(path: Path | str) -> LogReadout:
    """Read every line into memory; never raises for damaged content, only for a file that cannot be read."""
    path = Path(path)
    readout = LogReadout(path)
    try:
        with open_log(path) as handle:
            for line, item in _items(handle):
                readout.lines = line.number
                if isinstance(item, LogProblem):
                    readout.problems.append(item)
                else:
                    readout.links.append(item)
                    readout.entries.append(stored_entry(item))
    except OSError as error:
        raise LogError(path, f"cannot be read: {os_reason(error)}") from None
    return readout


def verify_chain(readout: LogReadout, expect_sha256: str | None = None, checker: Checker | None = None) -> ChainReport:
    """Walk a log already read into memory (see `walk_log` for the streaming walk)."""
    walker = ChainWalker(checker, parse_expect(expect_sha256))
    items: list[ChainLink | LogProblem] = sorted([*readout.links, *readout.problems], key=lambda x: x.line)
    for item in items:
        walker.feed(item)
    walker.finish()
    head = readout.links[-1] if readout.links else None
    return ChainReport(
        readout.path, len(readout.entries), walker.problems, head, walker.signed, walker.unsigned, checker
    )
