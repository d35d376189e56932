"""Accept-with-reason rules: a warn needs a reason and initials; a refuse is never accepted."""

from __future__ import annotations

import pytest

from osmodose.errors import InputError
from osmodose.verify import parse_acceptance, parse_initials
from osmodose.verify.decision import decide
from osmodose.verify.discrepancies import Discrepancy
from tests.verify_helpers import verify

REASON = "drawn from a 500 mL bag, 150 mL discarded"


def test_unaccepted_warning_holds_the_order(demo) -> None:
    # 350 mL of mannitol 20 % is not a whole number of 250 or 500 mL bags: a warn.
    record = verify(demo, agent="mannitol-20", volume="350", duration="20", line="central", stated_dose="1g/kg")
    assert record.decision.outcome == "held"
    assert record.decision.open_warnings == ["volume-not-a-presentation"]
    assert record.decision.accepted == []


def test_warning_accepted_with_a_reason_releases_the_order(demo) -> None:
    record = verify(
        demo,
        agent="mannitol-20",
        volume="350",
        duration="20",
        line="central",
        stated_dose="1g/kg",
        accept={"volume-not-a-presentation": REASON},
        initials="c.d.",
    )
    decision = record.decision
    assert decision.outcome == "released-with-accepted-warnings"
    assert decision.initials == "CD"
    [accepted] = decision.accepted
    assert (accepted.code, accepted.reason, accepted.initials) == ("volume-not-a-presentation", REASON, "CD")
    assert accepted.messages == ["350 mL is not a whole number of the unit's mannitol-20 stock (250 mL, 500 mL)"]
    assert decision.open_warnings == []


def test_clean_order_is_released(demo) -> None:
    # 250 mL of mannitol 20 % = 50 g = 0.71 g/kg for 70 kg, one 250 mL bag, no stated figures.
    record = verify(demo, agent="mannitol-20", volume="250", duration="20", line="central")
    assert record.decision.outcome == "released"


def test_refuse_cannot_be_accepted(demo) -> None:
    # Central-only 23.4 % ordered peripheral: refused; accepting it is recorded and not granted.
    record = verify(
        demo,
        agent="nacl-23.4",
        volume="30",
        duration="15",
        line="peripheral",
        accept={"central-line-only": "the central line is being placed now"},
    )
    decision = record.decision
    assert decision.outcome == "refused"
    assert decision.refusals == ["central-line-only"]
    [attempt] = decision.not_accepted
    assert attempt.code == "central-line-only"
    assert attempt.why == "a refuse cannot be accepted: the order must be changed"
    assert decision.accepted == []


def test_accepted_warnings_beside_a_refusal_are_recorded_but_the_order_stays_refused(demo) -> None:
    # 3500 mL mannitol 20 % peripheral: refused (10 g/kg); the peripheral-osmolarity warn
    # (1098 mOsm/L above the 900 mOsm/L demo limit) is accepted, yet the order stays refused.
    record = verify(
        demo,
        agent="mannitol-20",
        volume="3500",
        line="peripheral",
        stated_dose="1g/kg",
        accept={"peripheral-osmolarity": "short infusion through a large vein"},
    )
    assert record.decision.outcome == "refused"
    assert [a.code for a in record.decision.accepted] == ["peripheral-osmolarity"]


def test_acceptance_naming_no_finding_is_an_input_error(demo) -> None:
    with pytest.raises(InputError) as caught:
        verify(demo, agent="mannitol-20", volume="350", duration="20", line="central", accept={"rate-to-fast": REASON})
    assert str(caught.value) == (
        "accept: rate-to-fast is not a finding of this order (accepted: a warning code: volume-not-a-presentation)"
    )


def test_acceptance_on_a_clean_order_is_an_input_error(demo) -> None:
    with pytest.raises(InputError) as caught:
        verify(
            demo,
            agent="mannitol-20",
            volume="250",
            duration="20",
            line="central",
            accept={"volume-not-a-presentation": REASON},
        )
    assert str(caught.value) == (
        "accept: volume-not-a-presentation is not a finding of this order "
        "(accepted: a warning code: none: this order has no warning)"
    )


@pytest.mark.parametrize(
    ("typed", "message"),
    [
        (
            "volume-not-a-presentation=ok",
            "accept: volume-not-a-presentation=ok needs a written reason of at least 8 characters "
            "(accepted: CODE=REASON, e.g. volume-not-a-presentation=drawn from a 500 mL bag)",
        ),
        (
            "volume-not-a-presentation=",
            "accept: volume-not-a-presentation= needs a written reason of at least 8 characters "
            "(accepted: CODE=REASON, e.g. volume-not-a-presentation=drawn from a 500 mL bag)",
        ),
        (
            "volume-not-a-presentation",
            "accept: volume-not-a-presentation is not CODE=REASON "
            "(accepted: CODE=REASON, e.g. volume-not-a-presentation=drawn from a 500 mL bag)",
        ),
        (
            "=a reason without a code",
            "accept: =a reason without a code is not CODE=REASON "
            "(accepted: CODE=REASON, e.g. volume-not-a-presentation=drawn from a 500 mL bag)",
        ),
    ],
)
def test_acceptance_needs_a_code_and_a_written_reason(typed: str, message: str) -> None:
    with pytest.raises(InputError) as caught:
        parse_acceptance(typed)
    assert str(caught.value) == message


def test_acceptance_reason_is_kept_in_the_verifiers_words() -> None:
    accepted = parse_acceptance("Volume-Not-A-Presentation =  drawn from a 500 mL bag ")
    assert accepted.code == "volume-not-a-presentation"
    assert accepted.reason == "drawn from a 500 mL bag"


def test_same_code_accepted_twice_is_an_input_error() -> None:
    item = Discrepancy(code="line-not-stated", severity="warn", message="m", stated=None, recomputed=None, unit="")
    twice = [parse_acceptance(f"line-not-stated={REASON}"), parse_acceptance("line-not-stated=central line in place")]
    with pytest.raises(InputError) as caught:
        decide([item], twice, "AB")
    assert str(caught.value) == "accept: line-not-stated is accepted twice (accepted: one --accept per code)"


@pytest.mark.parametrize(
    ("typed", "expected"),
    [("ab", "AB"), ("A.B.", "AB"), ("j-pb", "J-PB"), ("Ëm", "ËM"), (" x y z ", "XYZ")],
)
def test_initials_are_normalised(typed: str, expected: str) -> None:
    assert parse_initials(typed) == expected


@pytest.mark.parametrize(
    ("typed", "message"),
    [
        ("", "initials: are required (accepted: 2 to 6 letters, e.g. AB)"),
        ("a", "initials: a are not initials (accepted: 2 to 6 letters, e.g. AB)"),
        ("a1", "initials: a1 are not initials (accepted: 2 to 6 letters, e.g. AB)"),
        ("abcdefg", "initials: abcdefg are not initials (accepted: 2 to 6 letters, e.g. AB)"),
    ],
)
def test_initials_are_required_and_checked(demo, typed: str, message: str) -> None:
    with pytest.raises(InputError) as caught:
        verify(demo, agent="mannitol-20", volume="250", initials=typed)
    assert str(caught.value) == message
