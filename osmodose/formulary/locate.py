"""Find the line of a key path in a TOML file, for error messages.

tomllib reports no positions for valid keys, so this reads the text once and
notes where each table header and each `key =` stands.  Key paths use the
form `agents[2].concentration`, counting `[[agents]]` tables from 1 as a
reader of the file would.  It handles the layout formularies use (tables,
arrays of tables, one key per line); anything it cannot place falls back to
the line of the enclosing table.
"""

from __future__ import annotations

import re

from osmodose.formulary.guard import lines_of

_ARRAY_HEADER = re.compile(r"^\s*\[\[\s*([A-Za-z0-9_.-]+)\s*\]\]")
_TABLE_HEADER = re.compile(r"^\s*\[\s*([A-Za-z0-9_.-]+)\s*\]")
_KEY = re.compile(r"^\s*([A-Za-z0-9_-]+|\"[^\"]*\")\s*=")


def key_lines(text: str) -> dict[str, int]:
    """Map each key path found in `text` to its 1-based line number."""
    lines: dict[str, int] = {}
    counts: dict[str, int] = {}
    current = ""
    for number, line in enumerate(lines_of(text), start=1):  # LF only, as TOML: not U+2028, \f or \x85
        if match := _ARRAY_HEADER.match(line):
            name = match.group(1)
            counts[name] = counts.get(name, 0) + 1
            current = f"{name}[{counts[name]}]"
            lines.setdefault(current, number)
        elif match := _TABLE_HEADER.match(line):
            current = match.group(1)
            lines.setdefault(current, number)
        elif match := _KEY.match(line):
            key = match.group(1).strip('"')
            lines.setdefault(f"{current}.{key}" if current else key, number)
    return lines


def line_of(lines: dict[str, int], key_path: str) -> int | None:
    """The line of `key_path`, else of its nearest enclosing table, else None."""
    path = key_path
    while path:
        if path in lines:
            return lines[path]
        if f"{path}[1]" in lines:  # the key of an array of tables: its first table
            return lines[f"{path}[1]"]
        cut = max(path.rfind("."), path.rfind("["))
        path = path[:cut] if cut > 0 else ""
    return None
