"""One way every command prints its result: the JSON document, or the text report.

The documents are built by the core (`to_json` of a result), the text too;
a command only chooses which one to print.
"""

from __future__ import annotations

import json
from collections.abc import Callable, Mapping
from typing import Any

from osmodose.safe_text import escape_controls

Lazy = Callable[[], Any]


def emit(document: Mapping[str, Any] | Lazy, text: str | Lazy, as_json: bool) -> None:
    """Print `document` as indented JSON when `as_json`, else `text` (each may be given as a function).

    The text's control and direction characters (from a label, a formulary's name, a typed value) are
    shown escaped, so nothing from input can drive the terminal; JSON escapes them by itself.
    """
    if as_json:
        print(json.dumps(document() if callable(document) else document, indent=2))
        return
    shown = escape_controls(text() if callable(text) else text, keep_lines=True)
    print(shown, end="" if shown.endswith("\n") else "\n")
