"""`osmodose verify` and `osmodose log`: exit codes, output, the log path, bad input."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from osmodose.cli.main import main
from osmodose.verify.paths import default_log_path
from osmodose.verify.signing import key_path, load_checker
from tests.conftest import run_cli

PATIENT = ["--weight", "70", "--age", "45", "--sex", "male", "--sodium", "141", "--glucose", "6", "--urea", "5"]
ACCEPT_BAG = "volume-not-a-presentation=drawn from a 500 mL bag, 150 mL discarded"


def verify_args(log: Path, *order: str) -> list[str]:
    return ["verify", *PATIENT, *order, "--initials", "AB", "--log", str(log)]


@pytest.mark.parametrize(
    ("order", "code", "outcome"),
    [
        # 250 mL mannitol 20 % = 50 g = 0.71 g/kg, one 250 mL bag: nothing crossed.
        (["--agent", "mannitol-20", "--volume", "250", "--duration", "20", "--line", "central"], 0, "released"),
        # 350 mL = 1 g/kg as stated, but not a whole bag: a warn, accepted with a reason.
        (
            [
                "--agent",
                "mannitol-20",
                "--volume",
                "350",
                "--duration",
                "20",
                "--line",
                "central",
                "--stated-dose",
                "1g/kg",
                "--accept",
                ACCEPT_BAG,
            ],
            0,
            "released-with-accepted-warnings",
        ),
        # The same warn not accepted: held.
        (["--agent", "mannitol-20", "--volume", "350", "--line", "central", "--stated-dose", "1g/kg"], 3, "held"),
        # 3500 mL for "1 g/kg" in 70 kg (350 mL): a 10-fold error, refused.
        (["--agent", "mannitol-20", "--volume", "3500", "--stated-dose", "1g/kg"], 4, "refused"),
    ],
)
def test_exit_status_follows_the_decision(tmp_path, capsys, order, code, outcome) -> None:  # type: ignore[no-untyped-def]
    log = tmp_path / "log.jsonl"
    assert main([*verify_args(log, *order), "--json"]) == code
    shown = json.loads(capsys.readouterr().out)
    assert shown["record"]["decision"]["outcome"] == outcome
    assert shown["sequence"] == 1
    assert shown["log"] == str(log)


def test_refuse_cannot_be_accepted_from_the_command_line(tmp_path, capsys) -> None:
    log = tmp_path / "log.jsonl"
    args = verify_args(log, "--agent", "nacl-23.4", "--volume", "30", "--duration", "15", "--line", "peripheral")
    assert main([*args, "--accept", "central-line-only=line going in now, will be central"]) == 4
    out = capsys.readouterr().out
    assert (
        "  not accepted: central-line-only: line going in now, will be central "
        "(a refuse cannot be accepted: the order must be changed)"
    ) in out.splitlines()


def test_text_output_names_the_saved_record(tmp_path, capsys) -> None:
    log = tmp_path / "log.jsonl"
    args = verify_args(log, "--agent", "mannitol-20", "--volume", "250", "--duration", "20", "--line", "central")
    assert main(args) == 0
    lines = capsys.readouterr().out.splitlines()
    assert lines[0] == "osmodose verification  RELEASED: no limit crossed and nothing contradicts the order"
    assert lines[-2] == f"saved as record 1 in {log}"
    assert lines[-1].startswith("record sha256 ")


def test_bad_input_is_one_line_and_exit_two_and_nothing_is_saved(tmp_path, capsys) -> None:
    log = tmp_path / "log.jsonl"
    args = verify_args(log, "--agent", "mannitol-20", "--volume", "350", "--accept", "volume-not-a-presentation=ok")
    assert main(args) == 2
    captured = capsys.readouterr()
    assert captured.err == (
        "osmodose: accept: volume-not-a-presentation=ok needs a written reason of at least 8 characters "
        "(accepted: CODE=REASON, e.g. volume-not-a-presentation=drawn from a 500 mL bag)\n"
    )
    assert captured.out == ""
    assert not log.exists()


def test_initials_are_required(tmp_path, capsys) -> None:
    with pytest.raises(SystemExit) as stopped:
        main(["verify", *PATIENT, "--agent", "mannitol-20", "--volume", "250", "--log", str(tmp_path / "x")])
    assert stopped.value.code == 2
    assert "the following arguments are required: --initials" in capsys.readouterr().err


def test_log_path_from_the_environment(tmp_path, capsys, monkeypatch) -> None:
    log = tmp_path / "from-env.jsonl"
    monkeypatch.setenv("OSMODOSE_LOG", str(log))
    assert main(["verify", *PATIENT, "--agent", "nacl-0.9", "--volume", "500", "--initials", "AB"]) == 0
    assert log.is_file()
    capsys.readouterr()
    assert main(["log", "list"]) == 0
    assert "  RELEASED  " in capsys.readouterr().out


@pytest.mark.parametrize(
    ("env", "platform", "expected"),
    [
        ({}, "linux", "/home/u/.local/state/osmodose/verifications.jsonl"),
        ({"XDG_STATE_HOME": "/srv/state"}, "linux", "/srv/state/osmodose/verifications.jsonl"),
        # A relative XDG path is ignored, as the XDG base directory convention says.
        ({"XDG_STATE_HOME": "state"}, "linux", "/home/u/.local/state/osmodose/verifications.jsonl"),
        ({"OSMODOSE_LOG": "/tmp/unit.jsonl", "XDG_STATE_HOME": "/srv/state"}, "linux", "/tmp/unit.jsonl"),
        ({}, "darwin", "/home/u/Library/Application Support/osmodose/verifications.jsonl"),
        ({"LOCALAPPDATA": "/c/AppData/Local"}, "win32", "/c/AppData/Local/osmodose/verifications.jsonl"),
    ],
)
def test_default_log_path(env: dict[str, str], platform: str, expected: str) -> None:
    assert default_log_path(env, platform, Path("/home/u")) == Path(expected)


def test_log_verify_list_and_show(tmp_path, capsys) -> None:
    log = tmp_path / "log.jsonl"
    main(verify_args(log, "--agent", "mannitol-20", "--volume", "250"))
    main(verify_args(log, "--agent", "mannitol-20", "--volume", "3500", "--stated-dose", "1g/kg"))
    capsys.readouterr()
    assert main(["log", "verify", "--log", str(log)]) == 0
    out = capsys.readouterr().out
    assert out.startswith(f"log {log}: 2 records, chain intact; newest record 2 sha256 ")
    assert main(["log", "list", "--log", str(log)]) == 0
    listed = capsys.readouterr().out.splitlines()
    assert len(listed) == 2
    assert "  AB      REFUSED " in listed[1] and "mannitol-20 3500 mL" in listed[1]
    assert main(["log", "show", "2", "--log", str(log)]) == 0
    shown = capsys.readouterr().out.splitlines()
    assert shown[0] == f"record 2 of log {log}"
    assert shown[2].startswith("signed by the unit's key ") and shown[2].endswith(": signature checked")
    assert shown[4].startswith("osmodose verification  REFUSED: ")
    assert main(["log", "show", "2", "--json", "--log", str(log)]) == 0
    assert json.loads(capsys.readouterr().out)["record"]["order"]["volume_ml"] == 3500.0


def test_log_verify_names_an_edited_record_with_exit_one(tmp_path, capsys) -> None:
    log = tmp_path / "log.jsonl"
    for volume in ("250", "500", "250"):
        main(verify_args(log, "--agent", "mannitol-20", "--volume", volume))
    log.write_bytes(log.read_bytes().replace(b'"volume_ml":500.0', b'"volume_ml":50.0'))
    capsys.readouterr()
    assert main(["log", "verify", "--log", str(log)]) == 1
    assert capsys.readouterr().out.splitlines()[:3] == [
        f"log {log}: chain NOT intact (3 readable records)",
        "first problem: record 2 (line 2) was altered: it no longer matches its SHA-256",
        "signatures: 2 checked with the unit's key " + load_checker(key_path(None)).key_id + f" ({key_path(None)})",
    ]
    assert main(["log", "show", "2", "--log", str(log)]) == 1
    assert "ALTERED: this record no longer matches its SHA-256" in capsys.readouterr().out


def test_log_list_reports_an_incomplete_last_line(tmp_path, capsys) -> None:
    log = tmp_path / "log.jsonl"
    main(verify_args(log, "--agent", "mannitol-20", "--volume", "250"))
    with log.open("ab") as handle:
        handle.write(b'{"sha256":"12')
    capsys.readouterr()
    assert main(["log", "list", "--log", str(log)]) == 1
    captured = capsys.readouterr()
    assert len(captured.out.splitlines()) == 1
    assert captured.err == (
        f"osmodose: log {log}:2: line 2 (the last) is incomplete: a write was interrupted or the file was cut; "
        "the records before it are not affected\n"
    )


def test_log_show_of_a_missing_record(tmp_path, capsys) -> None:
    log = tmp_path / "log.jsonl"
    main(verify_args(log, "--agent", "mannitol-20", "--volume", "250"))
    capsys.readouterr()
    assert main(["log", "show", "7", "--log", str(log)]) == 2
    assert capsys.readouterr().err == f"osmodose: log {log}: has no record 7 (records: 1 to 1)\n"


def test_log_of_a_missing_file(tmp_path, capsys) -> None:
    log = tmp_path / "none.jsonl"
    assert main(["log", "verify", "--log", str(log)]) == 2
    assert capsys.readouterr().err == (f"osmodose: log {log}: does not exist (no verification has been saved there)\n")


def test_verify_through_a_real_subprocess(tmp_path) -> None:
    # 23.4 % 30 mL over 5 min = 360 mL/h, above the demo maximum of 180 mL/h: refused, exit 4.
    log = tmp_path / "log.jsonl"
    done = run_cli(*verify_args(log, "--agent", "nacl-23.4", "--volume", "30", "--duration", "5", "--line", "central"))
    assert done.returncode == 4, done.stderr
    assert "  REFUSE rate-too-fast: rate 360.0 mL/h is faster than the agent's maximum of 180 mL/h\n" in done.stdout
    assert run_cli("log", "verify", "--log", str(log)).returncode == 0


def test_log_verify_notes_fragments_set_aside(tmp_path, capsys) -> None:
    log = tmp_path / "log.jsonl"
    main(verify_args(log, "--agent", "nacl-0.9", "--volume", "500"))
    with log.open("ab") as handle:
        handle.write(b'{"sha256":"12')
    main(verify_args(log, "--agent", "nacl-0.9", "--volume", "500"))
    capsys.readouterr()
    assert main(["log", "verify", "--log", str(log)]) == 0
    lines = capsys.readouterr().out.splitlines()
    assert lines[0] == f"note: fragments of interrupted writes were set aside in {log}.incomplete"
    assert lines[1].startswith(f"log {log}: 2 records, chain intact")
