"""Text from input, made safe to show on a terminal: control and direction-override characters escaped.

A typed value, a formulary's name or an agent's label, an episode's label or
a file name can hold ESC (a terminal escape sequence: clear the screen,
retitle the window, fake a line of output), BEL, or Unicode characters that
reverse the order in which the rest of the line is shown (U+202E).  Anything
osmodose echoes from input goes through `escape_controls` on its way out, so
such a character is shown as `\\x1b` or `\\u202e` and does nothing.
"""

from __future__ import annotations

import re

#: The bidirectional marks, embeddings, overrides and isolates, and the Unicode line and paragraph
#: separators (a line break to some terminals and editors).
_DIRECTION = "\u061c\u200e\u200f\u202a-\u202e\u2066-\u2069\u2028\u2029"
#: Every C0 and C1 control and DEL, with the direction characters.
_ANY = re.compile(f"[\x00-\x1f\x7f-\x9f{_DIRECTION}]")
#: The same less newline (\x0a) and tab (\x09): for text laid out in lines by osmodose itself.
_KEEP_LINES = re.compile(f"[\x00-\x08\x0b-\x1f\x7f-\x9f{_DIRECTION}]")


def _escaped(match: re.Match[str]) -> str:
    code = ord(match.group())
    return f"\\x{code:02x}" if code < 0x100 else f"\\u{code:04x}"


def escape_controls(text: object, keep_lines: bool = False) -> str:
    """`text` with every control or direction character written as an escape (`\\x1b`, `\\u202e`).

    With `keep_lines`, newlines and tabs stay (for a multi-line report made
    of lines osmodose laid out itself); otherwise they are escaped too, so a
    one-line message stays on one line.
    """
    pattern = _KEEP_LINES if keep_lines else _ANY
    return pattern.sub(_escaped, str(text))
