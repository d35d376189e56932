"""The verification screen's plain data (no terminal): what each box's text becomes, and which box an error marks."""

from __future__ import annotations

import subprocess
import sys
from datetime import datetime, timedelta, timezone
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from osmodose.app.verify_view import (
    DECISION_SHOWN,
    Entry,
    decision_text,
    discrepancy_rows,
    evaluate,
    patient_fields,
    patient_summary,
)
from osmodose.case.fields import WRITTEN_ORDER_KEYS
from osmodose.case.inputs import parse_check_request
from osmodose.formulary import Formulary
from osmodose.verify import make_acceptance, parse_order, verify_order
from tests.app.driving import PERIPHERAL_SALINE, TEN_FOLD_MANNITOL, VEIN_REASON, VERIFY_PATIENT

ROOT = Path(__file__).resolve().parents[2]
NOW = datetime(2026, 12, 2, 8, 30, tzinfo=timezone(timedelta(hours=1)))
SALINE_OK = Entry(
    VERIFY_PATIENT,
    PERIPHERAL_SALINE,
    {"peripheral-osmolarity": True},
    {"peripheral-osmolarity": VEIN_REASON},
    "AB",
)


def test_the_check_screens_own_order_is_left_out_of_the_patient() -> None:
    check_screen = {**VERIFY_PATIENT, "height": "", "agent": "nacl-3", "dose-mode": "dose", "amount": "6",
                    "duration": "20", "line": "central"}  # fmt: skip
    assert patient_fields(check_screen) == VERIFY_PATIENT
    assert patient_summary({"weight": "70", "bun": "14"}) == "weight 70 kg, BUN 14 mg/dL"
    assert patient_summary({}) == "nothing typed"


def test_the_screens_record_is_the_one_verify_order_gives_for_the_same_text(demo: Formulary) -> None:
    state = evaluate(SALINE_OK, demo, now=NOW)
    assert state.record is not None and state.error is None
    expected = verify_order(
        parse_check_request(dict(VERIFY_PATIENT)),
        parse_order(dict(PERIPHERAL_SALINE)),
        demo,
        [make_acceptance("peripheral-osmolarity", VEIN_REASON)],
        "AB",
        now=NOW,
    )
    assert state.record == expected
    assert state.outcome == "released-with-accepted-warnings"
    assert decision_text(state) == "✔ RELEASED-WITH-ACCEPTED-WARNINGS: each has a reason"


@pytest.mark.parametrize(
    ("change", "field", "missing"),
    [
        ({"patient": {**VERIFY_PATIENT, "weight": ""}}, "patient", True),
        ({"patient": {**VERIFY_PATIENT, "sodium": "1400"}}, "patient", False),
        ({"order": {**PERIPHERAL_SALINE, "agent": ""}}, "agent", True),
        ({"order": {**PERIPHERAL_SALINE, "volume": ""}}, "volume", True),
        ({"order": {**PERIPHERAL_SALINE, "volume": "250 mmHg"}}, "volume", False),
        ({"order": {**PERIPHERAL_SALINE, "rate": "0"}}, "rate", False),
        ({"order": {**TEN_FOLD_MANNITOL, "stated-sodium": "145"}}, "stated-sodium", False),  # no Na projection
        ({"reasons": {"peripheral-osmolarity": ""}}, "reason:peripheral-osmolarity", True),
        ({"reasons": {"peripheral-osmolarity": "ok"}}, "reason:peripheral-osmolarity", False),
        ({"initials": ""}, "initials", True),
        ({"initials": "A1"}, "initials", False),
    ],
)
def test_each_error_marks_the_box_it_was_typed_in(
    demo: Formulary, change: dict[str, object], field: str, missing: bool
) -> None:
    fields = {"patient": SALINE_OK.patient, "order": SALINE_OK.order, "accepted": SALINE_OK.accepted,
              "reasons": SALINE_OK.reasons, "initials": SALINE_OK.initials, **change}  # fmt: skip
    state = evaluate(Entry(**fields), demo, now=NOW)  # type: ignore[arg-type]
    assert (state.field, state.missing) == (field, missing)
    assert state.record is None
    assert state.state == ("incomplete" if missing else "invalid")


def test_words_for_a_reason_and_for_the_patient_name_the_box_not_an_option(demo: Formulary) -> None:
    short = Entry(VERIFY_PATIENT, PERIPHERAL_SALINE, {"peripheral-osmolarity": True}, {"peripheral-osmolarity": "ok"})
    assert decision_text(evaluate(short, demo, now=NOW)) == (
        "? NOT VALID: accept peripheral-osmolarity: needs a written reason of at least 8 characters"
    )
    no_weight = Entry({**VERIFY_PATIENT, "weight": ""}, PERIPHERAL_SALINE)
    assert decision_text(evaluate(no_weight, demo, now=NOW)) == (
        "… INCOMPLETE: weight: is required (on the check screen: escape to go back)"
    )


def test_a_refusal_shows_before_the_initials_and_nothing_can_accept_it(demo: Formulary) -> None:
    # 3500 mL x 200 g/L = 700 g = 10 g/kg in 70 kg, against a stated 1 g/kg (worked by hand).
    bare = evaluate(Entry(VERIFY_PATIENT, TEN_FOLD_MANNITOL), demo, now=NOW)
    assert bare.record is None and bare.field == "initials"
    assert bare.outcome == "refused" and bare.state == "refuse"
    assert decision_text(bare) == "✖ " + DECISION_SHOWN["refused"][1]
    assert set(bare.refusals) == {"stated-dose-mismatch", "dose-per-kg"}
    assert bare.acceptable == ["line-not-stated"]
    every = {code: True for code in [*bare.refusals, *bare.acceptable]}
    reasons = dict.fromkeys(every, "the prescriber confirmed it")
    tried = evaluate(Entry(VERIFY_PATIENT, TEN_FOLD_MANNITOL, every, reasons, "AB"), demo, now=NOW)
    assert tried.record is not None
    assert tried.record.outcome == "refused"
    assert [a.code for a in tried.record.decision.accepted] == ["line-not-stated"]
    assert tried.record.decision.not_accepted == []  # a refused code's tick never reaches the core


def test_discrepancies_are_shown_stated_beside_recomputed(demo: Formulary) -> None:
    state = evaluate(Entry(VERIFY_PATIENT, TEN_FOLD_MANNITOL), demo, now=NOW)
    assert state.preview is not None
    rows = discrepancy_rows(state.preview.discrepancies)
    assert [row[:3] for row in rows] == [
        ("refuse", "✖ REFUSE stated-dose-mismatch", "stated 1 g/kg · recomputed 10 g/kg"),
        ("warn", "▲ WARN line-not-stated", ""),  # nothing to set side by side: the order names no line
        # Mannitol 20 % (1098 mOsm/L) is judged by the default osmolar rate limits: no duration, held.
        ("warn", "▲ WARN duration-not-stated", ""),
    ]


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(
    order=st.fixed_dictionaries(
        {},
        optional={
            key: st.one_of(
                st.sampled_from(["mannitol-20", "nacl-3", "nacl-23.4", "250", "3500", "1 g/kg", "peripheral", "20"]),
                st.text(max_size=8),
            )
            for key in WRITTEN_ORDER_KEYS
        },
    ),
    initials=st.sampled_from(["", "AB", "1", "a.b."]),
    tick=st.booleans(),
    reason=st.text(max_size=12),
)
def test_any_typed_text_gives_a_state_and_a_refusal_is_never_acceptable(
    demo: Formulary, order: dict[str, str], initials: str, tick: bool, reason: str
) -> None:
    first = evaluate(Entry(VERIFY_PATIENT, order, initials=initials), demo, now=NOW)
    ticks = dict.fromkeys([*first.acceptable, *first.refusals], tick)
    state = evaluate(Entry(VERIFY_PATIENT, order, ticks, dict.fromkeys(ticks, reason), initials), demo, now=NOW)
    assert (state.record is None) == (state.error is not None)
    assert not set(state.acceptable) & set(state.refusals)
    if first.refusals:
        assert state.outcome == "refused"
    assert decision_text(state)


def test_the_verification_logic_imports_no_textual() -> None:
    # The screen's logic is tested without a terminal: it must not need one.
    code = "import sys, osmodose.app.verify_view; print(sorted(m for m in sys.modules if m.startswith('textual')))"
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True, cwd=ROOT)
    assert done.stdout.strip() == "[]"
