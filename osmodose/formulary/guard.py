"""What a formulary file may not hold, found before the TOML parser sees it.

tomllib is exact but has no limits: arrays nested 600 deep (a 1.2 KB file)
run Python out of stack, a key of 20,000 dotted parts takes it 20 seconds and
then does too, and an integer of 5,000 digits stops it with a bare
ValueError.  A formulary needs none of these: its deepest value is a list of
presentations inside an agent inside the list of agents.  `guard` scans the
text once, line by line (lines counted as TOML counts them: LF or CR LF
only), and returns the first such problem with its line, so each is one line
and exit 2 instead of a traceback or a hang.  `too_deep` checks the parsed
data as well, for nesting that stayed under the scan's radar.
"""

from __future__ import annotations

import re
from typing import Any

#: root -> agents[] -> {agent} -> presentations[] -> value: 4; a little room for an inline table.
MAX_DEPTH = 6
#: The most dotted parts a key needs ("limits.sodium_warn" has 2); generous.
MAX_KEY_PARTS = 8
#: Longer than this, a run of digits is no measurement (an int64 has 19 digits, a float 17 significant).
MAX_NUMBER_CHARS = 40

_STRINGS = re.compile(r'"""[\s\S]*?"""|\'\'\'[\s\S]*?\'\'\'|"(?:[^"\\\n]|\\.)*"|\'[^\'\n]*\'')
_COMMENT = re.compile(r"#[^\n]*")
_LONG_NUMBER = re.compile(r"[0-9][0-9_.eE+\-]{" + str(MAX_NUMBER_CHARS) + r",}")


def lines_of(text: str) -> list[str]:
    """The lines of `text` as TOML counts them: only LF ends a line (a CR before it stays, and is harmless)."""
    return text.split("\n")


def _blank_strings(text: str) -> str:
    """`text` with every string's content and every comment replaced by spaces, newlines kept (lines stay put)."""

    def blank(match: re.Match[str]) -> str:
        return re.sub(r"[^\n]", " ", match.group())

    return _COMMENT.sub(blank, _STRINGS.sub(blank, text))


def guard(text: str) -> tuple[str, int] | None:
    """(problem, line) for the first thing no formulary holds, or None."""
    bare = _blank_strings(text)
    depth = 0
    for number, line in enumerate(lines_of(bare), start=1):
        key = line.split("=", 1)[0] if "=" in line else line
        if key.count(".") + 1 > MAX_KEY_PARTS and not key.strip()[:1].isdigit():
            return (
                f"has a key of {key.count('.') + 1} dotted parts: no formulary key has more than {MAX_KEY_PARTS}",
                number,
            )
        if match := _LONG_NUMBER.search(line):
            return (
                f"has a number {len(match.group())} characters long: too long to be a number "
                f"(at most {MAX_NUMBER_CHARS})",
                number,
            )
        stripped = line.strip()
        table_header = stripped.startswith("[") and "=" not in line
        for char in line if not table_header else "":
            if char in "[{":
                depth += 1
                if depth > MAX_DEPTH:
                    return f"nests arrays or tables more than {MAX_DEPTH} deep: no formulary needs that", number
            elif char in "]}":
                depth = max(0, depth - 1)
    return None


def too_deep(data: Any, limit: int = MAX_DEPTH) -> bool:
    """Whether parsed TOML nests deeper than `limit` (a scalar is 0 deep)."""
    stack: list[tuple[Any, int]] = [(data, 0)]
    while stack:
        item, depth = stack.pop()
        children = item.values() if isinstance(item, dict) else item if isinstance(item, list) else None
        if children is None:
            continue
        if depth + 1 > limit:
            return True
        stack.extend((child, depth + 1) for child in children)
    return False
