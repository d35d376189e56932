"""The verification log: append, read back, and a chain that names the first altered or missing record."""

from __future__ import annotations

import hashlib
import json
import re
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from osmodose.errors import LogError
from osmodose.verify import append_record, read_log, verify_chain
from osmodose.verify.log import GENESIS_SHA256
from osmodose.verify.signing import key_path, load_checker
from tests.verify_helpers import verify

VOLUMES = ("250", "500", "350", "750", "1000")


@pytest.fixture(scope="module")
def records(demo):  # type: ignore[no-untyped-def]
    """Five records of different orders (mannitol 20 %, 250 to 1000 mL)."""
    return [verify(demo, agent="mannitol-20", volume=v, duration="20") for v in VOLUMES]


def write_log(path: Path, records) -> list[str]:  # type: ignore[no-untyped-def]
    return [append_record(path, r)[1] for r in records]


def lines_of(path: Path) -> list[bytes]:
    return path.read_bytes().split(b"\n")[:-1]


def put_lines(path: Path, lines: list[bytes], end: bytes = b"\n") -> None:
    path.write_bytes(b"\n".join(lines) + end)


def test_records_are_chained_from_the_first(tmp_path, records) -> None:
    path = tmp_path / "log.jsonl"
    digests = write_log(path, records)
    readout = read_log(path)
    assert [e.entry.sequence for e in readout.entries] == [1, 2, 3, 4, 5]
    assert readout.entries[0].entry.previous_sha256 == GENESIS_SHA256
    for before, after in zip(readout.entries, readout.entries[1:], strict=False):
        assert after.entry.previous_sha256 == before.sha256
    assert [e.sha256 for e in readout.entries] == digests
    report = verify_chain(readout)
    assert report.intact and report.records == 5
    assert report.head is not None and report.head.sha256 == digests[-1]
    assert readout.entries[2].entry.record == records[2]


def test_each_line_hash_is_of_the_stored_entry_bytes(tmp_path, records) -> None:
    path = tmp_path / "log.jsonl"
    write_log(path, records[:1])
    line = lines_of(path)[0]
    match = re.match(rb'^\{"sha256":"([0-9a-f]{64})","signature":"([0-9a-f]{128})","entry":(.*)\}$', line)
    assert match is not None
    assert hashlib.sha256(match.group(3)).hexdigest() == match.group(1).decode()
    assert json.loads(line)["entry"]["sequence"] == 1
    # The signature is Ed25519 over the same bytes (RFC 8032), by the unit's key.
    checker = load_checker(key_path(None))
    assert checker is not None and checker.check(match.group(3), match.group(2).decode())
    assert json.loads(line)["entry"]["signed_by"] == checker.key_id


def test_edited_record_is_named(tmp_path, records) -> None:
    path = tmp_path / "log.jsonl"
    write_log(path, records)
    lines = lines_of(path)
    # Someone changes the volume of record 2 from 500 to 50 mL.
    assert b'"volume_ml":500.0' in lines[1]
    lines[1] = lines[1].replace(b'"volume_ml":500.0', b'"volume_ml":50.0')
    put_lines(path, lines)
    report = verify_chain(read_log(path))
    assert not report.intact
    assert report.first_problem is not None
    assert report.first_problem.message == "record 2 (line 2) was altered: it no longer matches its SHA-256"
    assert len(report.problems) == 1


def test_edited_and_rehashed_record_is_named_by_the_next_link(tmp_path, records) -> None:
    path = tmp_path / "log.jsonl"
    write_log(path, records)
    lines = lines_of(path)
    match = re.match(rb'^\{"sha256":"([0-9a-f]{64})",("signature":"[0-9a-f]{128}",)"entry":(.*)\}$', lines[2])
    assert match is not None
    body = match.group(3).replace(b'"initials":"AB"', b'"initials":"ZZ"', 1)
    rehashed = hashlib.sha256(body).hexdigest().encode()
    lines[2] = b'{"sha256":"' + rehashed + b'",' + match.group(2) + b'"entry":' + body + b"}"
    put_lines(path, lines)
    report = verify_chain(read_log(path))
    assert report.first_problem is not None
    assert report.first_problem.message == (
        "record 3 (line 3) was altered: record 4 (line 4) holds a different SHA-256 for it"
    )


def test_deleted_record_is_named_missing(tmp_path, records) -> None:
    path = tmp_path / "log.jsonl"
    write_log(path, records)
    lines = lines_of(path)
    del lines[1]
    put_lines(path, lines)
    report = verify_chain(read_log(path))
    assert report.first_problem is not None
    assert report.first_problem.kind == "missing"
    assert report.first_problem.message == "record 2 missing: line 2 holds record 3"
    assert len(report.problems) == 1


def test_deleted_first_records_are_named(tmp_path, records) -> None:
    path = tmp_path / "log.jsonl"
    write_log(path, records)
    put_lines(path, lines_of(path)[2:])
    report = verify_chain(read_log(path))
    assert report.first_problem is not None
    assert report.first_problem.message == "records 1 to 2 missing: line 1 holds record 3"


def test_truncated_last_record_is_reported_not_fatal(tmp_path, records) -> None:
    path = tmp_path / "log.jsonl"
    write_log(path, records)
    data = path.read_bytes()
    path.write_bytes(data[: len(data) - 700])  # cut inside record 5
    readout = read_log(path)
    assert [e.entry.sequence for e in readout.entries] == [1, 2, 3, 4]
    report = verify_chain(readout)
    assert report.first_problem is not None
    assert report.first_problem.kind == "incomplete"
    assert report.first_problem.message == (
        "line 5 (the last) is incomplete: a write was interrupted or the file was cut; "
        "the records before it are not affected"
    )


def test_truncated_record_inside_the_log_is_damaged(tmp_path, records) -> None:
    path = tmp_path / "log.jsonl"
    write_log(path, records)
    lines = lines_of(path)
    lines[2] = lines[2][:200]
    put_lines(path, lines)
    report = verify_chain(read_log(path))
    assert report.first_problem is not None
    assert report.first_problem.message == "line 3 is not a complete record (damaged or cut)"


def test_removing_the_newest_records_is_caught_with_a_noted_hash(tmp_path, records) -> None:
    # The file alone cannot show that its newest records were removed; the SHA-256
    # noted in the chart after a verification can.
    path = tmp_path / "log.jsonl"
    digests = write_log(path, records)
    put_lines(path, lines_of(path)[:3])
    assert verify_chain(read_log(path)).intact
    report = verify_chain(read_log(path), expect_sha256=digests[4])
    assert report.first_problem is not None
    assert report.first_problem.message == (
        f"no record has SHA-256 {digests[4]}: it, or records after it, were removed or altered"
    )
    assert verify_chain(read_log(path), expect_sha256=digests[2].upper()).intact


def test_append_after_an_interrupted_write_sets_the_fragment_aside(tmp_path, records) -> None:
    path = tmp_path / "log.jsonl"
    write_log(path, records[:2])
    fragment = b'{"sha256":"ab12","entry":{"sequence":3,"prev'
    with path.open("ab") as handle:
        handle.write(fragment)
    append_record(path, records[2])
    readout = read_log(path)
    assert [e.entry.sequence for e in readout.entries] == [1, 2, 3]
    assert verify_chain(readout).intact
    assert Path(f"{path}.incomplete").read_bytes() == fragment + b"\n"


def test_append_refuses_to_continue_an_altered_chain(tmp_path, records) -> None:
    path = tmp_path / "log.jsonl"
    write_log(path, records[:2])
    lines = lines_of(path)
    lines[1] = lines[1].replace(b'"volume_ml":500.0', b'"volume_ml":50.0')
    put_lines(path, lines)
    before = path.read_bytes()
    with pytest.raises(LogError) as caught:
        append_record(path, records[2])
    assert str(caught.value) == (
        f"log {path}: its chain is broken: record 2 (line 2) was altered: it no longer matches its SHA-256 "
        "(this verification was not saved; osmodose log verify lists every problem; "
        "--append-to-broken-log appends anyway, and the record says so)"
    )
    assert path.read_bytes() == before


def test_missing_log_is_a_log_error(tmp_path) -> None:
    path = tmp_path / "none.jsonl"
    with pytest.raises(LogError) as caught:
        read_log(path)
    assert str(caught.value) == f"log {path}: does not exist (no verification has been saved there)"


def test_empty_log_is_intact(tmp_path) -> None:
    path = tmp_path / "log.jsonl"
    path.write_bytes(b"")
    report = verify_chain(read_log(path))
    assert report.intact and report.records == 0 and report.head is None


def test_append_creates_the_folder(tmp_path, records) -> None:
    path = tmp_path / "state" / "osmodose" / "log.jsonl"
    entry, _digest = append_record(path, records[0])
    assert entry.sequence == 1 and path.is_file()


@settings(max_examples=150, deadline=None)
@given(data=st.binary(max_size=400), keep=st.integers(0, 5))
def test_reader_never_crashes_on_any_bytes(tmp_path_factory, records, data: bytes, keep: int) -> None:
    # A valid prefix of records followed by arbitrary bytes.
    path = tmp_path_factory.mktemp("fuzz") / "log.jsonl"
    write_log(path, records[:keep])
    with path.open("ab") as handle:
        handle.write(data)
    readout = read_log(path)
    report = verify_chain(readout)
    # Every line ends with its newline, so bytes after it cannot touch the records before.
    assert report.records >= keep
    assert [e.entry.sequence for e in readout.entries][:keep] == list(range(1, keep + 1))


def test_a_file_that_is_no_log_is_not_cut(tmp_path, records) -> None:
    path = tmp_path / "notes.txt"
    path.write_bytes(b"shift notes, no newline at the end")
    with pytest.raises(LogError) as caught:
        append_record(path, records[0])
    assert str(caught.value) == (
        f"log {path}: does not end with a complete record and its last line is no record: "
        "is it a verification log? (this verification was not saved)"
    )
    assert path.read_bytes() == b"shift notes, no newline at the end"


def test_a_file_whose_last_line_is_no_record_is_not_appended_to(tmp_path, records) -> None:
    path = tmp_path / "notes.txt"
    path.write_bytes(b"line one\nline two\n")
    with pytest.raises(LogError):
        append_record(path, records[0])
    assert path.read_bytes() == b"line one\nline two\n"


def test_a_line_longer_than_any_record_is_damage_read_past_in_pieces(tmp_path, records, monkeypatch) -> None:
    from osmodose.verify import log_read

    monkeypatch.setattr(log_read, "MAX_LINE_BYTES", 64)
    monkeypatch.setattr(log_read, "_PIECE", 16)
    path = tmp_path / "log.jsonl"
    path.write_bytes(b"x" * 1000 + b"\n" + b"y" * 10 + b"\n")
    readout = read_log(path)
    assert [(p.line, p.kind) for p in readout.problems] == [(1, "damaged"), (2, "damaged")]
    assert readout.problems[0].message == "line 1 is far longer than any record: damaged or not a log"


def test_repeated_record_is_named(tmp_path, records) -> None:
    path = tmp_path / "log.jsonl"
    write_log(path, records[:3])
    lines = lines_of(path)
    put_lines(path, [lines[0], lines[1], lines[1], lines[2]])
    report = verify_chain(read_log(path))
    assert report.first_problem is not None
    assert report.first_problem.message == "line 3 holds record 2 again or out of place (expected record 3)"
    assert len(report.problems) == 1
