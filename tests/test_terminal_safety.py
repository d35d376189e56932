"""Nothing echoed from input reaches the terminal raw: ESC, BEL and direction overrides are shown escaped."""

from __future__ import annotations

from pathlib import Path

import pytest

from osmodose.cli.main import main
from tests.formulary_files import edited, write

CLEAR = "\x1b[2J\x1b[H"  # ECMA-48: erase the display, cursor home
TITLE = "\x1b]0;owned\x07"  # xterm: set the window title, ended by BEL
RLO = "\u202e"  # RIGHT-TO-LEFT OVERRIDE (Unicode UAX #9)
RAW = ("\x1b", "\x07", RLO)
CHECK = ["check", "--weight", "70", "--age", "45", "--sex", "male", "--sodium", "141"]


def assert_safe(text: str) -> None:
    assert not any(char in text for char in RAW), repr(text)


def test_a_typed_value_in_an_error_message_is_escaped(capsys) -> None:
    assert main([*CHECK[:-1], f"14{CLEAR}1"]) == 2
    err = capsys.readouterr().err
    assert_safe(err)
    assert "\\x1b[2J\\x1b[H" in err


def test_an_unknown_option_value_in_a_parser_error_is_escaped(capsys) -> None:
    with pytest.raises(SystemExit):
        main([*CHECK, "--weight", f"7{TITLE}"])
    err = capsys.readouterr().err
    assert_safe(err)
    assert "\\x1b]0;owned\\x07" in err


@pytest.fixture
def hostile_formulary(tmp_path: Path) -> Path:
    """A formulary whose name and label hold escapes (TOML allows them written as \\u001b)."""
    text = edited(
        {
            2: 'name = "Unit \\u001b[2J\\u001b[H\\u202eevil"',
            11: 'label = "Sodium chloride 3 % \\u001b]0;owned\\u0007"',
        }
    )
    return write(tmp_path, text)


@pytest.mark.parametrize(
    "args",
    [
        ["formulary", "show"],
        ["formulary", "validate"],
        ["formulary", "diff", "FILE"],
        [*CHECK, "--agent", "nacl-3", "--volume", "100", "--formulary"],
    ],
    ids=["show", "validate", "diff", "check"],
)
def test_a_formularys_name_and_labels_are_shown_escaped(hostile_formulary: Path, capsys, args: list[str]) -> None:
    args = [str(hostile_formulary) if a == "FILE" else a for a in args]
    main([*args, str(hostile_formulary)])
    out = capsys.readouterr().out
    assert out
    assert_safe(out)
    assert "Unit \\x1b[2J\\x1b[H\\u202eevil" in out or "Sodium chloride 3 % \\x1b]0;owned\\x07" in out


def test_an_episode_label_is_shown_escaped(tmp_path: Path, capsys) -> None:
    path = tmp_path / "ep.json"
    main(["course", "new", str(path), "--weight", "70", "--age", "45", "--sex", "male", "--label", f"bed 3{TITLE}"])
    main(["course", "add-lab", str(path), "--time", "2026-12-01T08:00Z", "--sodium", "140"])
    capsys.readouterr()
    main(["course", "show", str(path)])
    out = capsys.readouterr().out
    assert_safe(out)
    assert "patient: bed 3\\x1b]0;owned\\x07: 70 kg" in out


def test_verify_shows_typed_values_escaped(tmp_path: Path, capsys) -> None:
    code = main(
        [
            "verify", *CHECK[1:], "--agent", "nacl-3", "--volume", "100", "--duration", "30",
            "--stated-dose", f"1{RLO}mmol/kg", "--initials", "AB", "--log", str(tmp_path / "log.jsonl"),
        ]
    )  # fmt: skip
    captured = capsys.readouterr()
    assert code == 3  # held: the stated dose disagrees; the value typed is echoed escaped
    assert_safe(captured.out + captured.err)
    assert "1\\u202emmol/kg" in captured.out + captured.err


def test_the_apps_formulary_line_is_escaped(hostile_formulary: Path) -> None:
    from osmodose.app.widgets.formulary_bar import formulary_line
    from osmodose.formulary import load_formulary

    line = formulary_line(load_formulary(hostile_formulary))
    assert_safe(line)
    assert line.startswith("Unit \\x1b[2J\\x1b[H\\u202eevil  v1  sha256 ")
