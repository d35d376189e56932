"""Every rule of the table can word a finding: its template names only the fields a rule fills."""

from __future__ import annotations

import pytest

from osmodose.check.rules import CROSSED, RULES, Rule


@pytest.mark.parametrize("rule", RULES, ids=lambda rule: f"{rule.code}:{rule.figure}")
def test_every_rules_words_fill_without_a_placeholder_left(rule: Rule) -> None:
    text = rule.words()(1.25, 1.0, "warn")
    assert text
    assert "{" not in text
    assert "}" not in text


def test_the_default_words_say_the_figure_crossed_the_limit_with_its_unit() -> None:
    # The default words of a plain rule, as `osmodose check` prints them for serum sodium 157.3
    # against the default warn limit of 155 mmol/L (common practice, `formulary.limits`).
    rule = Rule("sodium-high", "sodium", "serum sodium", "mmol/L", "sodium_warn", "sodium_refuse", "always")
    assert rule.describe == CROSSED
    assert rule.words()(157.3, 155.0, "warn") == "serum sodium 157.3 mmol/L is above the warn limit of 155 mmol/L"
