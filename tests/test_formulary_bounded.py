"""A formulary file can be anything: each hostile one is one line and a non-zero exit, never a traceback or a hang."""

from __future__ import annotations

import os
from pathlib import Path

import pytest

from osmodose.cli.main import main
from osmodose.formulary.load import read_formulary
from tests.formulary_files import BASE_LINES, edited, write

COMMANDS = (
    ["formulary", "show"],
    ["check", "--weight", "70", "--age", "45", "--sex", "male", "--sodium", "141", "--formulary"],
)


def _one_line_from_every_reader(path: Path, capsys, expected: str) -> None:
    """show, check and diff stop with the same one line (exit 2); validate lists it (exit 1, not valid)."""
    for args in (
        ["formulary", "show", str(path)],
        [*COMMANDS[1], str(path)],
        ["formulary", "diff", str(path), str(path)],
    ):
        assert main(args) == 2
        assert capsys.readouterr().err == f"osmodose: formulary {expected}\n"
    assert main(["formulary", "validate", str(path)]) == 1
    assert capsys.readouterr().out.splitlines()[0] == expected


@pytest.mark.parametrize(
    ("extra", "expected_problem"),
    [
        # 600 nested arrays: 1.2 KB of text, once a RecursionError.
        ('deep = ' + "[" * 600 + "]" * 600, "22: nests arrays or tables more than 6 deep: no formulary needs that"),
        # An integer of 5,000 digits: once a bare ValueError.
        ("big = " + "9" * 5000, "22: has a number 5000 characters long: too long to be a number (at most 40)"),
        # 20,000 dotted key parts: once 14-20 s and then a RecursionError.
        ("a" + ".a" * 20000 + " = 1", "22: has a key of 20001 dotted parts: no formulary key has more than 8"),
        ("deep = " + "{ a = " * 10 + "1" + " }" * 10,
         "22: nests arrays or tables more than 6 deep: no formulary needs that"),
    ],
)  # fmt: skip
def test_a_file_beyond_any_formulary_is_one_line(tmp_path: Path, capsys, extra: str, expected_problem: str) -> None:
    path = write(tmp_path, edited(append="\n" + extra + "\n"))
    _one_line_from_every_reader(path, capsys, f"{path}:{expected_problem}")


def test_a_file_over_one_megabyte_is_refused_before_reading(tmp_path: Path, capsys) -> None:
    path = write(tmp_path, edited(append="# " + "x" * 1_000_000 + "\n"))
    assert main(["formulary", "validate", str(path)]) == 2
    assert capsys.readouterr().err == (
        f"osmodose: formulary {path}: is {path.stat().st_size:,} bytes, over the 1 MB limit for this kind of file "
        "(see docs/file-limits.md)\n"
    )


@pytest.mark.skipif(not Path("/dev/urandom").exists(), reason="needs /dev/urandom")
def test_a_device_as_a_formulary_is_refused_instead_of_read_for_ever(capsys) -> None:
    assert main(["formulary", "show", "/dev/urandom"]) == 2
    assert capsys.readouterr().err == ("osmodose: formulary /dev/urandom: is a device, not a file osmodose can read\n")


@pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="needs FIFOs")
def test_a_fifo_as_a_formulary_is_refused_without_waiting(tmp_path: Path, capsys) -> None:
    fifo = tmp_path / "unit.toml"
    os.mkfifo(fifo)
    assert main(["formulary", "validate", str(fifo)]) == 2
    assert capsys.readouterr().err == f"osmodose: formulary {fifo}: is a pipe (FIFO), not a file osmodose can read\n"


def test_a_byte_order_mark_is_accepted(tmp_path: Path) -> None:
    path = tmp_path / "unit.toml"
    path.write_bytes(b"\xef\xbb\xbf" + edited().encode("utf-8"))  # as some Windows editors save UTF-8
    result = read_formulary(path)
    assert result.problems == [] and result.formulary is not None
    assert result.formulary.name == "Test unit (invented)"


@pytest.mark.parametrize("separator", ["\u2028", "\u2029", "\x85"])
def test_line_numbers_count_lines_as_toml_does(tmp_path: Path, separator: str) -> None:
    # Only LF ends a line in TOML (v1.0.0, "Newline means LF (0x0A) or CRLF"): a U+2028 in a comment does not.
    text = edited({1: f"# notes{separator}more notes\n[formulary]", 6: 'sodium_wran = "155 mmol/L"'})
    result = read_formulary(write(tmp_path, text))
    assert [(p.key_path, p.line) for p in result.problems] == [("limits.sodium_wran", 7)]


def test_the_base_file_still_reads(tmp_path: Path) -> None:
    assert read_formulary(write(tmp_path, edited())).formulary is not None
    assert len(BASE_LINES) == 20
