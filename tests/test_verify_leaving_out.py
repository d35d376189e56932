"""Leaving a field out of an order never turns a refusal into a release.

The line of a central-only agent, and the duration or rate of an agent whose rate is judged
(its max_rate, or the default osmolar rate limits of a hypertonic agent), cannot be accepted
away: the order is held until it states them.  A stated figure is a claim: leaving it out removes
only the refusal of that claim contradicting the order (there is nothing left to contradict), and
with a duration and a rate both written, leaving one out removes only what their disagreement
and the faster of the two gave.
"""

from __future__ import annotations

from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

from osmodose.case.inputs import parse_check_request
from osmodose.errors import InputError
from osmodose.formulary import Formulary
from osmodose.verify import VerificationRecord, make_acceptance, parse_order, verify_order
from tests.verify_helpers import MAN_70, NOW, codes, verify

RELEASED = ("released", "released-with-accepted-warnings")
OPTIONAL = ("duration", "rate", "line", "stated-dose", "stated-sodium")
RATE_FINDINGS = {"stated-rate-mismatch", "rate-too-fast", "osmolar-rate-high"}


def own_contradiction(field: str, order: dict[str, object]) -> set[str]:
    """The refusals only `field` can make by contradicting the rest of the order."""
    if field == "stated-dose":
        return {"stated-dose-mismatch"}
    if field == "stated-sodium":
        return {"stated-sodium-mismatch"}
    other = "rate" if field == "duration" else "duration" if field == "rate" else None
    if other is not None and order.get(other) is not None:
        return RATE_FINDINGS  # both written: the faster was judged, and their disagreement
    return set()


def most_released(formulary: Formulary, patient: dict[str, object], order: dict[str, object]) -> VerificationRecord:
    """The order judged with every warning a verifier could accept accepted: the nearest it comes to release."""
    request = parse_check_request(patient)
    written = parse_order(order)
    bare = verify_order(request, written, formulary, (), "AB", now=NOW)
    decision = bare.decision
    acceptable = [code for code in decision.open_warnings if code not in decision.must_state]
    reasons = [make_acceptance(code, "accepted after a call with the prescriber") for code in acceptable]
    return verify_order(request, written, formulary, reasons, "AB", now=NOW)


orders = st.fixed_dictionaries(
    {
        "agent": st.sampled_from(["nacl-3", "nacl-7.5", "nacl-23.4", "mannitol-20", "bicarb-8.4", "nacl-0.9"]),
        "volume": st.sampled_from(["30", "100", "250", "350", "1000", "3500"]),
        "duration": st.sampled_from([None, "1", "3", "5", "10", "20", "60"]),
        "rate": st.sampled_from([None, "100", "180", "1000", "5000"]),
        "line": st.sampled_from([None, "central", "peripheral"]),
        "stated-dose": st.sampled_from([None, "1g/kg", "10g/kg", "2mL/kg", "5mL/kg"]),
        "stated-sodium": st.sampled_from([None, "140", "150", "160"]),
    }
)
patients = st.fixed_dictionaries(
    {
        "weight": st.sampled_from(["70", "9.5", "40"]),
        "age": st.sampled_from(["45", "12"]),
        "sex": st.sampled_from(["female", "male"]),
        "sodium": st.sampled_from(["108", "120", "130", "140", "158", "165"]),
        "potassium": st.sampled_from([None, "2.4", "3.0", "4.0"]),
        "glucose": st.sampled_from([None, "6", "45"]),
        "urea": st.sampled_from([None, "5"]),
        "osmolality": st.sampled_from([None, "300", "330"]),
    }
)


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(patient=patients, order=orders)
def test_leaving_an_optional_field_out_never_turns_refused_into_released(
    demo: Formulary, patient: dict[str, object], order: dict[str, object]
) -> None:
    try:
        full = verify_order(parse_check_request(patient), parse_order(order), demo, (), "AB", now=NOW)
    except InputError:
        assume(False)
        return
    assume(full.outcome == "refused")
    for field in OPTIONAL:
        if order.get(field) is None:
            continue
        remaining = set(full.decision.refusals) - own_contradiction(field, order)
        if not remaining:
            continue
        shorter = {**order, field: None}
        try:
            record = most_released(demo, patient, shorter)
        except InputError:
            continue
        assert record.outcome not in RELEASED, (field, sorted(remaining), record.decision)


# --- the scenario that showed it: a refusal released by leaving fields out -------------------------


def test_23_4_percent_with_no_line_and_no_duration_is_held_however_much_is_accepted(demo: Formulary) -> None:
    # Peripheral over 5 min: refused (central line only; 30 mL in 5 min = 360 mL/h, above its 180 mL/h).
    refused = verify(demo, agent="nacl-23.4", volume="30", duration="5", line="peripheral")
    assert refused.outcome == "refused"
    assert set(refused.decision.refusals) == {"central-line-only", "rate-too-fast"}
    # The same order with the line and the duration left out: held, and no reason can accept it.
    left_out = verify(
        demo,
        agent="nacl-23.4",
        volume="30",
        accept={"line-not-stated": "central line in place", "duration-not-stated": "over ten minutes as usual"},
    )
    assert codes(left_out) == {"line-not-stated": "warn", "duration-not-stated": "warn"}
    assert left_out.outcome == "held"
    assert left_out.decision.must_state == ["line-not-stated", "duration-not-stated"]
    assert [a.why for a in left_out.decision.not_accepted] == [
        "the order must state it: leaving it out cannot be accepted"
    ] * 2


def test_a_hypertonic_agent_with_no_duration_is_held_for_the_default_rate_limits(demo: Formulary) -> None:
    # 3 % saline has no max_rate; at 1027 mOsm/L (label) it is judged by the default osmolar rate limits.
    record = verify(demo, agent="nacl-3", volume="250", line="central")
    assert record.outcome == "held"
    found = next(d for d in record.discrepancies if d.code == "duration-not-stated")
    assert found.message == (
        "nacl-3 (1027 mOsm/L) is judged by the default osmolar rate limits and the order gives neither duration "
        "nor rate: state one"
    )
    assert record.decision.must_state == ["duration-not-stated"]


def test_an_isotonic_agent_needs_no_duration(demo: Formulary) -> None:
    record = verify(demo, patient=MAN_70, agent="nacl-0.9", volume="1000", line="peripheral")
    assert record.outcome == "released"


def test_the_record_says_what_the_order_must_state(demo: Formulary) -> None:
    text = verify(demo, agent="nacl-3", volume="250", line="central").render_text()
    assert "  held until the order states it (cannot be accepted): duration-not-stated\n" in text
