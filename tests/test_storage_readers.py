"""Bounded reading, strict JSON and terminal-safe text: the helpers every file reader and printer uses."""

from __future__ import annotations

import os
from pathlib import Path

import pytest

from osmodose.safe_text import escape_controls
from osmodose.storage.bounded import FileRefused, read_bounded
from osmodose.storage.strict_json import JsonProblem, load_strict


def test_a_regular_file_under_the_limit_is_read(tmp_path: Path) -> None:
    path = tmp_path / "f"
    path.write_bytes(b"abc")
    assert read_bounded(path, 3) == b"abc"


def test_a_file_over_the_limit_is_refused_before_reading(tmp_path: Path) -> None:
    path = tmp_path / "f"
    path.write_bytes(b"abcd")
    with pytest.raises(FileRefused) as caught:
        read_bounded(path, 3)
    assert caught.value.problem == "is 4 bytes, over the 3 bytes limit for this kind of file (see docs/file-limits.md)"


@pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="needs FIFOs")
def test_a_fifo_is_refused_without_waiting_for_a_writer(tmp_path: Path) -> None:
    fifo = tmp_path / "pipe"
    os.mkfifo(fifo)
    with pytest.raises(FileRefused) as caught:
        read_bounded(fifo, 100)
    assert caught.value.problem == "is a pipe (FIFO), not a file osmodose can read"


@pytest.mark.skipif(not Path("/dev/urandom").exists(), reason="needs /dev/urandom")
def test_a_device_that_never_ends_is_refused() -> None:
    with pytest.raises(FileRefused) as caught:
        read_bounded("/dev/urandom", 100)
    assert caught.value.problem == "is a device, not a file osmodose can read"


def test_a_folder_is_refused(tmp_path: Path) -> None:
    with pytest.raises(FileRefused) as caught:
        read_bounded(tmp_path, 100)
    assert caught.value.problem == "is a folder, not a file osmodose can read"


@pytest.mark.parametrize(
    ("text", "problem", "line"),
    [
        ('{"a": 1,\n "a": 2}', 'key "a" is written twice in one object', 2),
        ('{"labs": [{"time": 1},\n {"time": 2,\n  "time": 3}]}', 'key "time" is written twice in one object', 3),
        ('{"a":\n ' + "9" * 5000 + "}", "a number 5000 characters long is too long to be a number", 2),
        ('{"a": NaN}', "NaN is not a number JSON allows", None),
        ('{"a": -Infinity}', "-Infinity is not a number JSON allows", None),
        ("[" * 5000 + "]" * 5000, "is nested far deeper than the 6 levels the format needs", None),
        ("[[[[[[[[1]]]]]]]]", "is nested deeper than the 6 levels the format needs", None),
    ],
)
def test_strict_json_refuses_what_json_loads_lets_through(text: str, problem: str, line: int | None) -> None:
    with pytest.raises(JsonProblem) as caught:
        load_strict(text, max_depth=6)
    assert (caught.value.problem, caught.value.line) == (problem, line)


def test_strict_json_reads_ordinary_json() -> None:
    assert load_strict('{"a": [1, 2.5, "x", null, true], "b": {}}', max_depth=6) == {
        "a": [1, 2.5, "x", None, True],
        "b": {},
    }


@pytest.mark.parametrize(
    ("raw", "shown"),
    [
        ("\x1b[2J\x1b[Hnormal", "\\x1b[2J\\x1b[Hnormal"),  # ESC: clear the screen, cursor home (ECMA-48)
        ("bell\x07", "bell\\x07"),
        ("abc\u202edcba", "abc\\u202edcba"),  # RIGHT-TO-LEFT OVERRIDE (Unicode UAX #9)
        ("isolate\u2067x\u2069", "isolate\\u2067x\\u2069"),
        ("two\nlines\tand tab", "two\\x0alines\\x09and tab"),
        ("C1 \x9b", "C1 \\x9b"),  # 8-bit CSI
        ("Natrium 3 % (Larkspur)", "Natrium 3 % (Larkspur)"),
        ("", ""),
    ],
)
def test_controls_and_direction_overrides_are_shown_escaped(raw: str, shown: str) -> None:
    assert escape_controls(raw) == shown


def test_lines_can_be_kept_for_a_report() -> None:
    assert escape_controls("a\x1b\nb\tc", keep_lines=True) == "a\\x1b\nb\tc"
