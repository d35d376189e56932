"""A log only the unit can write: forged, fabricated or rehashed records fail `log verify`.

Each attack is one a person with write access to the log file but without
the unit's key can make: every SHA-256 can be recomputed by anyone, a
signature cannot (Ed25519, RFC 8032).
"""

from __future__ import annotations

import hashlib
import json
import os
import re
import stat
from pathlib import Path

import pytest

from osmodose.cli.main import main
from osmodose.verify.signing import init_key, key_path, load_checker
from tests.test_verify_cli import verify_args

REFUSED_ORDER = ("--agent", "mannitol-20", "--volume", "3500", "--stated-dose", "1g/kg")  # 10-fold: refused
RELEASED_ORDER = ("--agent", "mannitol-20", "--volume", "250", "--duration", "20", "--line", "central")
_LINE = re.compile(rb'^\{"sha256":"([0-9a-f]{64})"(,"signature":"[0-9a-f]{128}")?,"entry":(\{.*\})\}$')


@pytest.fixture
def log(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> Path:
    """Three signed records: released, refused (10-fold volume), released."""
    path = tmp_path / "log.jsonl"
    for order in (RELEASED_ORDER, REFUSED_ORDER, RELEASED_ORDER):
        main(verify_args(path, *order))
    capsys.readouterr()
    return path


def rehash(path: Path, edit, keep_signatures: bool = True, untouched: int = 0) -> None:  # type: ignore[no-untyped-def]
    """Apply `edit(index, entry_dict) -> entry_dict` to each entry and recompute every hash and link, as a forger can.

    The first `untouched` lines are kept byte for byte.
    """
    previous = "0" * 64
    out = []
    for index, line in enumerate(path.read_bytes().splitlines()):
        match = _LINE.match(line)
        assert match is not None
        if index < untouched:
            out.append(line)
            previous = match.group(1).decode()
            continue
        entry = edit(index, json.loads(match.group(3)))
        entry["previous_sha256"] = previous
        body = json.dumps(entry, separators=(",", ":")).encode()
        previous = hashlib.sha256(body).hexdigest()
        signature = match.group(2) if keep_signatures and match.group(2) else b""
        out.append(b'{"sha256":"' + previous.encode() + b'"' + signature + b',"entry":' + body + b"}")
    path.write_bytes(b"\n".join(out) + b"\n")


def release_record_two(index: int, entry: dict) -> dict:  # type: ignore[type-arg]
    if index == 1:
        entry["record"]["decision"]["outcome"] = "released"
    return entry


def strip_signature(entry: dict) -> dict:  # type: ignore[type-arg]
    entry.pop("signed_by", None)
    return entry


def verify_log(path: Path, capsys: pytest.CaptureFixture[str], *extra: str) -> tuple[int, list[str]]:
    code = main(["log", "verify", "--log", str(path), *extra])
    return code, capsys.readouterr().out.splitlines()


def test_an_untouched_signed_log_verifies(log: Path, capsys) -> None:
    code, out = verify_log(log, capsys)
    assert code == 0
    assert out[0].startswith(f"log {log}: 3 records, chain intact; newest record 3 sha256 ")
    checker = load_checker(key_path(None))
    assert checker is not None
    assert out[1] == f"signatures: 3 checked with the unit's key {checker.key_id} ({key_path(None)})"
    assert out[2] == "decisions: 3 re-derived from each record's own findings and acceptances"
    assert out[3] == "recomputed: 3 with the formulary file each names"


def test_a_refusal_turned_into_a_release_with_every_hash_recomputed_fails(log: Path, capsys) -> None:
    rehash(log, release_record_two)  # the old signatures copied: the forger has no key to remake them
    code, out = verify_log(log, capsys)
    assert code == 1
    assert out[0] == f"log {log}: chain NOT intact (3 readable records)"
    assert out[1].startswith("first problem: record 2 (line 2) has a signature the unit's key does not match")


def test_the_same_forgery_with_every_signature_removed_fails_on_the_decision(log: Path, capsys) -> None:
    rehash(log, lambda i, e: strip_signature(release_record_two(i, e)), keep_signatures=False)
    code, out = verify_log(log, capsys)
    assert code == 1
    assert out[1] == (
        "first problem: record 2 (line 2): its decision says released, but its own findings and acceptances "
        "give refused (refusals: dose-per-kg, stated-dose-mismatch)"
    )
    assert any(line.startswith("signatures: none: this log is unsigned") for line in out)


def test_signatures_removed_from_the_forged_record_on_fail_as_unsigned(log: Path, capsys) -> None:
    rehash(log, lambda i, e: strip_signature(release_record_two(i, e)), keep_signatures=False, untouched=1)
    code, out = verify_log(log, capsys)
    assert code == 1
    assert out[1] == (
        "first problem: record 2 (line 2) is not signed, but records before it are: once a log is signed every "
        "record is"
    )


def test_a_consistent_forgery_is_caught_by_recomputing_from_the_stored_inputs(log: Path, capsys) -> None:
    def consistent(index: int, entry: dict) -> dict:  # type: ignore[type-arg]
        if index == 1:  # release it and remove every trace of the refusal from the record
            record = entry["record"]
            record["discrepancies"] = [d for d in record["discrepancies"] if d["severity"] != "refuse"]
            record["result"]["findings"] = [f for f in record["result"]["findings"] if f["severity"] != "refuse"]
            record["decision"].update(outcome="released", refusals=[], open_warnings=[])
            record["discrepancies"] = [d for d in record["discrepancies"] if d["severity"] != "warn"]
            record["result"]["findings"] = [f for f in record["result"]["findings"] if f["severity"] != "warn"]
            record["result"]["status"] = "ok"
        return strip_signature(entry)

    rehash(log, consistent, keep_signatures=False)
    code, out = verify_log(log, capsys)
    assert code == 1
    assert out[1].startswith("first problem: record 2 (line 2): recomputed, it differs: ")
    # Without recomputation nothing in the unsigned file itself contradicts it: the key and the recomputation are
    # the defences.
    code, out = verify_log(log, capsys, "--no-recompute")
    assert code == 0 and "signatures: none: this log is unsigned" in out[1]


def test_log_show_flags_a_decision_that_does_not_follow(log: Path, capsys) -> None:
    rehash(log, lambda i, e: strip_signature(release_record_two(i, e)), keep_signatures=False)
    assert main(["log", "show", "2", "--log", str(log)]) == 1
    out = capsys.readouterr().out
    assert "osmodose verification  RELEASED: " in out
    assert (
        "DECISION DOES NOT FOLLOW: its decision says released, but its own findings and acceptances give refused" in out
    )


def test_a_fabricated_record_appended_at_the_end_fails_even_with_expect(log: Path, capsys) -> None:
    code, out = verify_log(log, capsys)
    newest = out[0].rsplit(" ", 1)[1]
    lines = log.read_bytes().splitlines()
    match = _LINE.match(lines[-1])
    assert match is not None
    entry = json.loads(match.group(3))
    entry["sequence"] = 4
    entry["previous_sha256"] = newest
    body = json.dumps(entry, separators=(",", ":")).encode()
    forged = b'{"sha256":"' + hashlib.sha256(body).hexdigest().encode() + b'"' + match.group(2) + b',"entry":' + body
    log.write_bytes(log.read_bytes() + forged + b"}\n")
    code, out = verify_log(log, capsys, "--expect", newest)
    assert code == 1
    assert out[1].startswith("first problem: record 4 (line 4) has a signature the unit's key does not match")


def test_expect_accepts_the_prefix_log_list_prints(log: Path, capsys) -> None:
    main(["log", "list", "--log", str(log)])
    prefix = capsys.readouterr().out.splitlines()[-1].rsplit(" ", 1)[1]
    assert len(prefix) == 12
    code, out = verify_log(log, capsys, "--expect", prefix)
    assert code == 0 and "chain intact" in out[0]
    code, out = verify_log(log, capsys, "--expect", "0" * 12)
    assert code == 1
    assert out[1] == (
        "first problem: no record has SHA-256 000000000000...: it, or records after it, were removed or altered"
    )


@pytest.mark.parametrize("value", ["nonsense", "0f53e50de4d", "g" * 64, "0" * 65])
def test_a_malformed_expect_is_an_input_error(log: Path, capsys, value: str) -> None:
    assert main(["log", "verify", "--log", str(log), "--expect", value]) == 2
    assert capsys.readouterr().err == (
        f"osmodose: expect: {value} is not a SHA-256 or the start of one (accepted: a record's SHA-256, "
        "or its first 12 or more hex characters (as log list prints them))\n"
    )


def test_log_list_exits_non_zero_when_records_are_missing(log: Path, capsys) -> None:
    lines = log.read_bytes().splitlines()
    log.write_bytes(lines[0] + b"\n" + lines[2] + b"\n")
    assert main(["log", "list", "--log", str(log)]) == 1
    assert capsys.readouterr().err == f"osmodose: log {log}:2: record 2 missing: line 2 holds record 3\n"


def test_verify_refuses_to_append_to_a_broken_chain(log: Path, capsys) -> None:
    lines = log.read_bytes().splitlines()
    log.write_bytes(lines[0] + b"\n" + lines[2] + b"\n")
    before = log.read_bytes()
    assert main(verify_args(log, *RELEASED_ORDER)) == 2
    captured = capsys.readouterr()
    assert captured.out == ""  # nothing shown as verified
    assert captured.err == (
        f"osmodose: log {log}: its chain is broken: record 2 missing: line 2 holds record 3 "
        "(this verification was not saved; osmodose log verify lists every problem; "
        "--append-to-broken-log appends anyway, and the record says so)\n"
    )
    assert log.read_bytes() == before


def test_append_to_broken_log_appends_and_the_record_says_so(log: Path, capsys) -> None:
    lines = log.read_bytes().splitlines()
    log.write_bytes(lines[0] + b"\n" + lines[2] + b"\n")
    assert main([*verify_args(log, *RELEASED_ORDER), "--append-to-broken-log"]) == 0
    out = capsys.readouterr().out
    assert "appended to a log whose chain is broken: record 2 missing: line 2 holds record 3\n" in out
    assert "saved as record 4 in" in out
    assert main(["log", "show", "4", "--log", str(log), "--json"]) == 0
    shown = json.loads(capsys.readouterr().out)
    assert shown["appended_to_broken_log"] == "record 2 missing: line 2 holds record 3"
    code, out = verify_log(log, capsys)
    assert code == 1  # the gap is still there, and the log says who appended past it
    assert out[-1].startswith("note: 1 record(s) appended past a broken chain (--append-to-broken-log)")


def test_an_old_unsigned_log_still_verifies_and_says_it_is_unsigned(log: Path, capsys) -> None:
    rehash(log, lambda i, e: strip_signature(e), keep_signatures=False)  # as written before signing
    code, out = verify_log(log, capsys)
    assert code == 0
    assert out[1] == (
        "signatures: none: this log is unsigned (3 records written before osmodose signed records): "
        "the chain shows changes, not who made them"
    )
    # New records are signed; the log stays valid (unsigned, then signed).
    assert main(verify_args(log, *RELEASED_ORDER)) == 0
    capsys.readouterr()
    code, out = verify_log(log, capsys)
    assert code == 0 and out[1].endswith("; 3 older records unsigned")


def test_a_record_signed_by_another_key_is_named(log: Path, capsys, tmp_path: Path) -> None:
    other = tmp_path / "keys" / "other.key"
    init_key(other)
    code, out = verify_log(log, capsys, "--key", str(other))
    assert code == 1
    assert "says it was signed by key " in out[1] and "not by the unit's key" in out[1]


def test_the_public_half_is_enough_to_check(log: Path, capsys) -> None:
    public_only = log.parent / "elsewhere" / "unit.key"
    public_only.parent.mkdir()
    (public_only.parent / "unit.key.pub").write_bytes(Path(f"{key_path(None)}.pub").read_bytes())
    code, out = verify_log(log, capsys, "--key", str(public_only))
    assert code == 0 and out[1].startswith("signatures: 3 checked with the unit's key ")


def test_init_key_makes_a_private_key_and_never_replaces_it(tmp_path: Path, capsys) -> None:
    path = tmp_path / "config" / "osmodose" / "log-signing.key"
    assert main(["log", "init-key", "--key", str(path)]) == 0
    assert stat.S_IMODE(path.stat().st_mode) == 0o600
    assert stat.S_IMODE(path.parent.stat().st_mode) == 0o700
    assert Path(f"{path}.pub").is_file()
    before = path.read_bytes()
    capsys.readouterr()
    assert main(["log", "init-key", "--key", str(path)]) == 2
    assert "already exists; it was not replaced" in capsys.readouterr().err
    assert path.read_bytes() == before


def test_a_key_in_the_logs_folder_is_refused(tmp_path: Path, capsys) -> None:
    log = tmp_path / "state" / "log.jsonl"
    key = tmp_path / "state" / "log-signing.key"
    assert main([*verify_args(log, *RELEASED_ORDER), "--key", str(key)]) == 2
    assert "is inside the log's folder" in capsys.readouterr().err
    assert not log.exists() and not key.exists()


def test_a_key_readable_by_others_is_refused(tmp_path: Path, capsys) -> None:
    key = tmp_path / "keys" / "k.key"
    init_key(key)
    os.chmod(key, 0o644)
    assert main([*verify_args(tmp_path / "state" / "log.jsonl", *RELEASED_ORDER), "--key", str(key)]) == 2
    assert capsys.readouterr().err == (
        f"osmodose: signing key {key}: can be read by others: allow its owner only (chmod 600), or make a new key\n"
    )


def test_the_first_verification_makes_the_key(tmp_path: Path, capsys, monkeypatch) -> None:
    key = tmp_path / "fresh" / "log-signing.key"
    monkeypatch.setenv("OSMODOSE_LOG_KEY", str(key))
    assert main(verify_args(tmp_path / "state" / "log.jsonl", *RELEASED_ORDER)) == 0
    assert key.is_file() and stat.S_IMODE(key.stat().st_mode) == 0o600
    assert capsys.readouterr().err.startswith(f"osmodose: made the unit's signing key {key} (key id ")


def test_the_record_number_is_printed_only_once_saved_and_a_full_stdout_says_it_was(tmp_path: Path) -> None:
    import subprocess
    import sys

    from tests.conftest import REPO_ROOT

    if not Path("/dev/full").exists():
        pytest.skip("needs /dev/full")
    log = tmp_path / "log.jsonl"
    env = dict(os.environ, PYTHONPATH=str(REPO_ROOT))
    with open("/dev/full", "w") as full:
        done = subprocess.run(
            [sys.executable, "-m", "osmodose", *verify_args(log, *RELEASED_ORDER)],
            stdout=full,
            stderr=subprocess.PIPE,
            text=True,
            env=env,
            check=False,
        )
    assert done.returncode == 2
    assert done.stderr.startswith(f"osmodose: the verification was saved as record 1 in {log} (sha256 ")
    assert done.stderr.endswith(
        "but it could not be printed (No space left on device): do not verify it again; osmodose log show 1 prints it\n"
    )
    assert len(log.read_bytes().splitlines()) == 1


def test_a_line_with_a_right_hash_but_no_record_is_damage_and_stops_the_append(tmp_path: Path, capsys) -> None:
    body = b'{"sequence":1,"previous_sha256":"' + b"0" * 64 + b'","record":' + b"[" * 5000 + b"]" * 5000 + b"}"
    log = tmp_path / "log.jsonl"
    log.write_bytes(b'{"sha256":"' + hashlib.sha256(body).hexdigest().encode() + b'","entry":' + body + b"}\n")
    before = log.read_bytes()
    assert main(verify_args(log, *RELEASED_ORDER)) == 2
    assert "its last record is damaged or altered" in capsys.readouterr().err
    assert log.read_bytes() == before
    code, out = verify_log(log, capsys)
    assert code == 1 and out[1] == "first problem: line 1 is not a readable record (damaged or edited)"


@pytest.mark.parametrize(
    ("env", "platform", "expected"),
    [
        ({}, "linux", "/home/u/.config/osmodose/log-signing.key"),
        ({"XDG_CONFIG_HOME": "/srv/config"}, "linux", "/srv/config/osmodose/log-signing.key"),
        ({"XDG_CONFIG_HOME": "config"}, "linux", "/home/u/.config/osmodose/log-signing.key"),  # relative: ignored
        ({"OSMODOSE_LOG_KEY": "/keys/unit.key"}, "linux", "/keys/unit.key"),
        ({}, "darwin", "/home/u/Library/Preferences/osmodose/log-signing.key"),
        ({"APPDATA": "/c/AppData/Roaming"}, "win32", "/c/AppData/Roaming/osmodose/log-signing.key"),
    ],
)
def test_the_key_lives_in_the_configuration_folder_not_the_logs(env, platform: str, expected: str) -> None:  # type: ignore[no-untyped-def]
    from osmodose.verify.paths import default_log_path
    from osmodose.verify.signing import default_key_path

    key = default_key_path(env, platform, Path("/home/u"))
    assert key == Path(expected)
    assert key.parent != default_log_path(env, platform, Path("/home/u")).parent
