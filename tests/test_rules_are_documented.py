"""Every rule a user can meet is documented in docs/ (or the README), in the words the program uses.

Finding codes come from the rule table, the discrepancy table and the course's findings (found in
the source, so a new course rule without documentation fails here); input rules by the words of
their messages; the output precision by the declared table.
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from osmodose.check.rules import RULES
from osmodose.science.precision import FIGURE_DECIMALS
from osmodose.verify.discrepancies import CODES

ROOT = Path(__file__).parent.parent
DOCS = "\n".join(path.read_text(encoding="utf-8") for path in sorted((ROOT / "docs").glob("*.md")))
DOCS += (ROOT / "README.md").read_text(encoding="utf-8")
CHECK_DOC = (ROOT / "docs" / "check.md").read_text(encoding="utf-8")


def course_codes() -> set[str]:
    """Every finding code the course modules can report, read from their source."""
    found: set[str] = set()
    for path in (ROOT / "osmodose" / "course").glob("*.py"):
        text = path.read_text(encoding="utf-8")
        found |= set(re.findall(r'code="([a-z0-9-]+)"', text))
        found |= set(re.findall(r'\(\s*"((?:sodium|projected)-(?:rise|fall)-24h)"', text))
    found |= {code.replace("-high", "-was-high") for code in ("sodium-high", "osmolality-high", "osmolar-gap-high")}
    return found


@pytest.mark.parametrize("code", sorted({r.code for r in RULES} | set(CODES) | course_codes()))
def test_every_finding_code_is_documented(code: str) -> None:
    assert f"`{code}`" in DOCS, code


@pytest.mark.parametrize(
    "words",
    [
        "is outside the plausible range",
        "outside 30–80 % of body weight",  # the Watson refusal
        "is for adults only",
        "is required for the Watson formula",
        "cannot be given together with",
        "has no unit",
        "is in mmol of sodium, but",
        "is in grams, but",
        "osmodose projects no sodium for it",
        "cannot be reached with",
        "outside the plausible range",
        "within 30 mmol/L of the serum sodium",
        "is not a sex osmodose knows",
    ],
)
def test_every_input_rule_is_documented(words: str) -> None:
    assert words in DOCS, words


@pytest.mark.parametrize("key", sorted(FIGURE_DECIMALS))
def test_every_figures_precision_is_in_the_check_doc(key: str) -> None:
    # Course-only figures are documented by their family (mmol/L, mmHg) in docs/check.md's table.
    families = {"sodium_mmol_l", "mmol_l", "mosm_kg", "mmhg", "_h", "mannitol_g", "g_per_kg"}
    assert f"`{key}`" in CHECK_DOC or any(key.endswith(f) for f in families), key
