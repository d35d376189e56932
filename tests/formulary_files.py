"""A small valid formulary (an invented unit) with known line numbers, and edits of it for tests.

Each line of BASE is numbered in the comment beside it so an expected message
can name the line; `edited` replaces whole lines by number (the text may
hold several lines or none) and appends extra text.
"""

from __future__ import annotations

from pathlib import Path

BASE_LINES = (
    "[formulary]",  # 1
    'name = "Test unit (invented)"',  # 2
    'version = "1"',  # 3
    "",  # 4
    "[limits]",  # 5
    'sodium_warn = "155 mmol/L"',  # 6
    'sodium_refuse = "160 mmol/L"',  # 7
    "",  # 8
    "[[agents]]",  # 9
    'id = "nacl-3"',  # 10
    'label = "Sodium chloride 3 % 250 mL"',  # 11
    'solute = "sodium chloride"',  # 12
    'concentration = "3% w/v"',  # 13
    'route = "central-only"',  # 14
    'presentations = ["250 mL"]',  # 15
    'sodium = "513 mmol/L"',  # 16: 3 % NaCl, product labels
    'osmolarity = "1027 mOsm/L"',  # 17: 3 % NaCl, product labels
    'dose_warn = "5 mL/kg"',  # 18
    'dose_refuse = "10 mL/kg"',  # 19
    'max_rate = "500 mL/h"',  # 20
)

#: Replacements that leave out the agent's label sodium and osmolarity (lines 16 and 17).
NO_COMPOSITION_LINES = {16: "", 17: ""}

#: A second agent to append (starts on line 22 when appended after a blank line).
SECOND_AGENT = """
[[agents]]
id = "mannitol-20"
label = "Mannitol 20 % 500 mL"
solute = "mannitol"
concentration = "20% w/v"
route = "central-only"
"""


def edited(replace: dict[int, str] | None = None, append: str = "") -> str:
    """BASE with lines replaced by number (1-based) and `append` added at the end."""
    lines = list(BASE_LINES)
    for number, text in (replace or {}).items():
        lines[number - 1] = text
    body = "\n".join(line for line in lines if line is not None) + "\n"
    return body + append


def write(tmp_path: Path, text: str, name: str = "unit.toml") -> Path:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path
