"""The screen's plain data (no terminal): which field an error marks, and the status line's words."""

from __future__ import annotations

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from osmodose.app.form_view import AMOUNT_HINT
from osmodose.app.view import SCREEN_NAMES, SYMBOL, banner_text, echo, evaluate, show
from osmodose.formulary import Formulary
from osmodose.science.choices import DOSE_MODE as DOSE_CHOICE
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
        words = outcome.message.replace(typed, "")  # what was typed is quoted as typed
        assert "--" not in words and "target-rise" not in words


@pytest.mark.parametrize("mode", DOSE_CHOICE.values)
def test_every_dose_style_has_a_hint_and_errors_name_it_as_on_screen(demo: Formulary, mode: str) -> None:
    # Generated from the choice: a new style (an absolute target sodium) gets its hint and its words here.
    assert AMOUNT_HINT[mode]
    outcome = evaluate({**SALINE, "dose-mode": mode, "amount": "100000"}, demo)
    assert outcome.field == "amount" and outcome.error is not None
    assert outcome.message.startswith(f"{DOSE_CHOICE.label(mode)}: ")
    assert not any(key in outcome.message for key in SCREEN_NAMES if SCREEN_NAMES[key] != key and "-" in key)


def test_a_target_change_out_of_range_says_so_in_the_screen_words(demo: Formulary) -> None:
    outcome = evaluate({**SALINE, "amount": "134"}, demo)
    # The field table's plausible range for a target change: -30 to 30 mmol/L (common practice).
    assert outcome.message.startswith("target Na change: 134 is outside the plausible range (accepted: -30 to 30")
    assert "target-rise" not in outcome.message and "target-rise" not in show(outcome, SALINE).mark


def test_a_bare_number_reads_with_its_unit_and_a_typed_unit_with_its_value() -> None:
    assert echo("weight", "62") == ("kg", "")
    # 154 lb x 0.45359237 kg/lb = 69.85 kg (the international pound, NIST SP 811).
    assert echo("weight", "154 lb") == ("", "= 69.9 kg")
    assert echo("duration", "30") == ("min", "")
    assert echo("weight", "7,5") == ("", "")  # not read: nothing is claimed beside it
