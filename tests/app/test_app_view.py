"""The screen's plain data (no terminal): which field an error marks, and the status line's words."""

from __future__ import annotations

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from osmodose.app.view import SYMBOL, banner_text, evaluate
from osmodose.formulary import Formulary
from tests.app.driving import MANNITOL, REFUSE, SALINE


@pytest.mark.parametrize(
    ("change", "field", "missing"),
    [
        ({"weight": ""}, "weight", True),
        ({"weight": "7,5 kg"}, "weight", False),
        ({"sodium": "1400"}, "sodium", False),
        ({"amount": ""}, "amount", True),  # an agent with nothing to give
        ({"agent": ""}, "agent", True),  # an amount with no agent
        ({"amount": "1 g/kg/"}, "amount", False),
        ({"dose-mode": "target-rise", "amount": "6"}, "amount", False),  # no sodium projection for mannitol
        ({"tbw-method": "watson"}, "height", True),
        ({"duration": "0"}, "duration", False),
    ],
)
def test_each_error_marks_the_field_the_user_typed_it_in(
    demo: Formulary, change: dict[str, str], field: str, missing: bool
) -> None:
    outcome = evaluate({**MANNITOL, **change}, demo)
    assert outcome.result is None
    assert (outcome.field, outcome.missing) == (field, missing)


@pytest.mark.parametrize(
    ("case", "banner"),
    [
        (MANNITOL, "✔ OK: no limit crossed"),
        (SALINE, "▲ WARN: a soft limit is crossed; review before giving"),
        (REFUSE, "✖ REFUSE: a hard limit is crossed; do not give as ordered"),
    ],
)
def test_status_line_has_its_own_word_and_symbol(demo: Formulary, case: dict[str, str], banner: str) -> None:
    assert banner_text(evaluate(case, demo)) == banner


def test_every_state_has_a_different_symbol() -> None:
    assert len(set(SYMBOL.values())) == len(SYMBOL)


TYPED = st.text(alphabet="0123456789 .,+-*/^()%eEgkmLlbdhminOsuμ", max_size=12)


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(key=st.sampled_from(["weight", "age", "height", "sodium", "glucose", "bun", "osmolality", "amount", "duration"]),
       typed=TYPED)  # fmt: skip
def test_any_half_typed_text_gives_a_result_or_a_marked_field(demo: Formulary, key: str, typed: str) -> None:
    # The app reads the form on every key press: no text may raise past InputError.
    outcome = evaluate({**SALINE, key: typed}, demo)
    assert (outcome.result is None) == (outcome.error is not None)
    if outcome.error is not None:
        assert outcome.field is not None
