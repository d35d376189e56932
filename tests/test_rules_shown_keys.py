"""Words that show the judged value through `rules.shown` say the same for every value of one `shown_key`.

The audit makes such a rule's message once per key (the value to one decimal, or the value itself where
that decimal would be the limit) rather than once per value: a rule marked so whose words showed the value
any other way would give some rows another row's words.  These are properties of the words themselves: no
figure is judged here.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from osmodose.check.rules import RULES, RULES_BY_CODE, Rule, shown, shown_keys

MARKED = [rule for rule in RULES if rule.shows_value]
#: Limits as formularies write them: whole, one decimal, more decimals, negative (the osmolar gap's).
LIMITS = [10.0, 145.0, 155.0, 160.0, 320.0, 12.5, 0.35, -10.0, 2.0]


def _same_key_pair(value: float, step: float, limit: float) -> tuple[float, float]:
    """`value` and another value with the same `shown_key` (a nearby value in the same tenth)."""
    other = value + step
    keys = shown_keys(np.array([value, other]), limit)
    return (value, other) if keys[0] == keys[1] else (value, value)


def test_the_rules_with_many_distinct_values_are_marked() -> None:
    # Without the mark the audit stays right, only slower; with a wrong mark it would be wrong (next test).
    for code in ("sodium-high", "projected-sodium-high", "osmolality-high", "osmolar-gap-high", "osmolar-gap-negative"):
        assert RULES_BY_CODE[code].shows_value, code


@settings(max_examples=400, deadline=None)
@given(
    rule=st.sampled_from(MARKED),
    value=st.floats(-400, 400),
    step=st.floats(-0.05, 0.05),
    limit=st.sampled_from(LIMITS),
    severity=st.sampled_from(["warn", "refuse"]),
)
def test_marked_words_are_the_same_for_values_of_one_key(
    rule: Rule, value: float, step: float, limit: float, severity: str
) -> None:
    first, second = _same_key_pair(value, step, limit)
    words = rule.words()
    assert words(first, limit, severity) == words(second, limit, severity)


def test_a_value_that_rounds_onto_the_limit_is_its_own_key() -> None:
    # shown writes 309.96 against 310 as "309.96", not "310.0": such values are not pooled.
    keys = shown_keys(np.array([309.96, 309.97, 309.9, 309.91]), 310.0)
    assert keys.tolist() == [309.96, 309.97, 309.9, 309.9]
    assert shown(309.96, 310.0) == "309.96" and shown(309.91, 310.0) == "309.9"


def test_words_that_show_more_decimals_would_fail_the_property() -> None:
    # The dose rule writes the dose per kg to two decimals: it must not be marked, and pooling it would be wrong.
    dose = RULES_BY_CODE["dose-per-kg"]
    assert not dose.shows_value
    first, second = _same_key_pair(1.234, 0.002, 1.5)
    assert first != second
    assert dose.words()(first, 1.5, "warn") != dose.words()(second, 1.5, "warn")


@pytest.mark.parametrize("rule", MARKED, ids=lambda rule: rule.code)
def test_each_marked_rule_pools_the_values_of_a_tenth(rule: Rule) -> None:
    # 141.02 and 141.04 are both written 141.0 against a limit of 145.
    words = rule.words()
    assert words(141.02, 145.0, "warn") == words(141.04, 145.0, "warn")
