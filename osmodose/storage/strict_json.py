"""JSON read strictly: what a hand edit or a damaged file can hide is refused, with its line.

`json.loads` alone keeps the last of two equal keys (so an edit can silently
replace a value), accepts NaN and Infinity, recurses until Python's stack
runs out on deep nesting, and stops with a bare ValueError on an integer of
thousands of digits.  `load_strict` refuses each of these as a `JsonProblem`
naming the key or the number and its line, so every file reader can report it
in one line.  The fast C parser does the work; only when it finds a repeated
key is the text walked again, in pure Python, to find that key's line.
"""

from __future__ import annotations

import contextlib
import json
import re
from json.decoder import WHITESPACE, JSONDecodeError, scanstring  # type: ignore[attr-defined]
from json.scanner import py_make_scanner  # type: ignore[attr-defined]
from typing import Any

#: Longer than this, a run of digits is no measurement (an int64 has 19 digits, a float 17 significant).
MAX_NUMBER_CHARS = 40


class JsonProblem(ValueError):
    """Why a JSON text is refused, and the line (1-based) where, when known."""

    def __init__(self, problem: str, line: int | None = None) -> None:
        super().__init__(problem)
        self.problem = problem
        self.line = line

    def __str__(self) -> str:
        return f"line {self.line}: {self.problem}" if self.line is not None else self.problem


class _Repeated(Exception):
    def __init__(self, key: str) -> None:
        super().__init__(key)
        self.key = key


def _line_at(text: str, index: int) -> int:
    return text.count("\n", 0, index) + 1


def _pairs(pairs: list[tuple[str, Any]]) -> dict[str, Any]:
    result: dict[str, Any] = {}
    for key, value in pairs:
        if key in result:
            raise _Repeated(key)
        result[key] = value
    return result


def _number_guard(kind: type) -> Any:
    def parse(text: str) -> Any:
        if len(text) > MAX_NUMBER_CHARS:
            raise JsonProblem(f"a number {len(text)} characters long is too long to be a number")
        return kind(text)

    return parse


def _constant(name: str) -> Any:
    raise JsonProblem(f"{name} is not a number JSON allows")


def _depth_of(value: Any, limit: int) -> int:
    """Nesting depth of parsed JSON (a scalar is 0), stopping once past `limit`."""
    deepest = 0
    stack: list[tuple[Any, int]] = [(value, 0)]
    while stack:
        item, depth = stack.pop()
        if isinstance(item, dict):
            children: list[Any] = list(item.values())
        elif isinstance(item, list):
            children = item
        else:
            continue
        depth += 1
        deepest = max(deepest, depth)
        if deepest > limit:
            return deepest
        stack.extend((child, depth) for child in children)
    return deepest


def load_strict(text: str, max_depth: int) -> Any:
    """Parse `text`: JSONDecodeError for invalid JSON, as `json.loads`; JsonProblem for a repeated key,
    NaN or Infinity, a number too long to be one, or nesting deeper than `max_depth`.
    """
    try:
        data = json.loads(
            text,
            object_pairs_hook=_pairs,
            parse_int=_number_guard(int),
            parse_float=_number_guard(float),
            parse_constant=_constant,
        )
    except _Repeated as repeated:
        raise JsonProblem(f'key "{repeated.key}" is written twice in one object', _repeated_line(text)) from None
    except JsonProblem as problem:
        raise JsonProblem(problem.problem, _long_number_line(text)) from None
    except RecursionError:
        raise JsonProblem(f"is nested far deeper than the {max_depth} levels the format needs") from None
    if _depth_of(data, max_depth) > max_depth:
        raise JsonProblem(f"is nested deeper than the {max_depth} levels the format needs")
    return data


_LONG_NUMBER = re.compile(r"-?\d[\d.eE+-]{" + str(MAX_NUMBER_CHARS) + ",}")


def _long_number_line(text: str) -> int | None:
    match = _LONG_NUMBER.search(text)
    return _line_at(text, match.start()) if match else None


def _repeated_line(text: str) -> int | None:
    """The line of the first repeated key, by a second, position-aware parse (only on this error path)."""
    found: list[int] = []

    class _Decoder(json.JSONDecoder):
        def __init__(self) -> None:
            super().__init__()
            self.parse_object = _object
            self.scan_once = py_make_scanner(self)

    def _object(s_and_end: tuple[str, int], strict: bool, scan_once: Any, *_: Any, **__: Any) -> tuple[Any, int]:
        s, end = s_and_end
        seen: set[str] = set()
        result: dict[str, Any] = {}
        end = WHITESPACE.match(s, end).end()
        if s[end : end + 1] == "}":
            return result, end + 1
        while True:
            if s[end : end + 1] != '"':
                raise JSONDecodeError("Expecting property name enclosed in double quotes", s, end)
            key_at = end
            key, end = scanstring(s, end + 1, strict)
            if key in seen and not found:
                found.append(_line_at(s, key_at))
                raise _Repeated(key)
            seen.add(key)
            end = WHITESPACE.match(s, end).end()
            if s[end : end + 1] != ":":
                raise JSONDecodeError("Expecting ':' delimiter", s, end)
            end = WHITESPACE.match(s, end + 1).end()
            value, end = scan_once(s, end)
            result[key] = value
            end = WHITESPACE.match(s, end).end()
            nxt = s[end : end + 1]
            end += 1
            if nxt == "}":
                return result, end
            if nxt != ",":
                raise JSONDecodeError("Expecting ',' delimiter", s, end - 1)
            end = WHITESPACE.match(s, end).end()

    with contextlib.suppress(_Repeated, JSONDecodeError, RecursionError, ValueError):
        _Decoder().decode(text)
    return found[0] if found else None
