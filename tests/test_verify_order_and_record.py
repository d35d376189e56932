"""Reading the order as written, and the verification record built from it."""

from __future__ import annotations

import json
from datetime import datetime

import pytest

from osmodose.case.inputs import parse_check_request
from osmodose.errors import InputError
from osmodose.verify import VerificationRecord, parse_order, verify_order
from tests.verify_helpers import MAN_70, verify


def test_order_is_read_into_canonical_units() -> None:
    order = parse_order(
        {
            "agent": "nacl-3",
            "volume": "0.25 L",
            "duration": "0.25 h",
            "line": "Peripheral",
            "stated-dose": "250 mL",
            "stated-sodium": "145",
        }
    )
    assert order.volume_ml == 250.0
    assert order.duration_min == 15.0
    assert order.line == "peripheral"
    assert order.stated_dose is not None
    assert (order.stated_dose.amount, order.stated_dose.unit, order.stated_dose.per_kg) == (250.0, "mL", False)
    assert order.stated_sodium_mmol_l == 145.0
    assert order.entered["volume"] == "0.25 L"


def test_rate_gives_the_duration_checked() -> None:
    # 30 mL at 120 mL/h = 0.25 h = 15 min.
    order = parse_order({"agent": "nacl-23.4", "volume": "30", "rate": "120"})
    assert order.duration_for_check == pytest.approx(15.0)


@pytest.mark.parametrize(
    ("fields", "message"),
    [
        ({"volume": "250"}, "agent: is required (accepted: an agent id from the formulary)"),
        ({"agent": "nacl-3"}, "volume: is required (accepted: the volume as ordered, e.g. 350 mL)"),
        (
            {"agent": "nacl-3", "volume": "50 L"},
            "volume: 50 L is outside the plausible range (accepted: 0.1 to 5000 mL)",
        ),
        (
            {"agent": "nacl-3", "volume": "250", "rate": "0"},
            "rate: 0 is not above zero (accepted: a rate in mL/h, e.g. 1000 or 2 mL/min)",
        ),
        (
            {"agent": "nacl-3", "volume": "250", "rate": "100000"},
            "rate: 100000 gives 250 mL over 0.15 min, outside the plausible duration (accepted: 1 to 10080 min)",
        ),
        ({"agent": "nacl-3", "volume": "250", "rate": "5 g"}, "rate: 5 g is in the wrong unit (accepted: mL/h)"),
        (
            {"agent": "nacl-3", "volume": "250", "line": "arterial"},
            "line: arterial is not a line osmodose knows (accepted: central or peripheral)",
        ),
        (
            {"agent": "nacl-3", "volume": "250", "stated-dose": "5"},
            "stated-dose: 5 has no unit "
            "(accepted: g, mL, mmol or mOsm, absolute or per kg (1 g/kg, 5 mL/kg, 50 g, 120 mmol))",
        ),
        (
            {"agent": "nacl-3", "volume": "250", "stated-sodium": "1450"},
            "stated-sodium: 1450 is outside the plausible range (accepted: 90 to 200 mmol/L)",
        ),
    ],
)
def test_bad_order_fields_name_the_field(fields: dict[str, object], message: str) -> None:
    with pytest.raises(InputError) as caught:
        parse_order(fields)
    assert str(caught.value) == message


def test_unknown_agent_lists_the_known_ones(demo) -> None:
    with pytest.raises(InputError) as caught:
        verify(demo, agent="nacl-5", volume="250")
    assert str(caught.value).startswith("agent: nacl-5 is not an agent of this formulary (accepted: one of: nacl-0.9, ")


def test_record_holds_inputs_as_entered_and_normalised(demo) -> None:
    patient = dict(MAN_70, weight="154.3 lb")
    record = verify(demo, patient=patient, agent="mannitol-20", volume="0.35 L", duration="20", stated_dose="1g/kg")
    assert record.entered["weight"] == "154.3 lb"
    assert record.entered["volume"] == "0.35 L"
    assert record.entered["initials"] == "AB"
    # 154.3 lb x 0.45359237 kg/lb = 69.99 kg (international avoirdupois pound).
    assert record.request.patient.weight_kg == pytest.approx(69.99, abs=0.01)
    assert record.order.volume_ml == pytest.approx(350.0)
    assert record.request.dose is not None and record.request.dose.mode == "volume"
    assert record.formulary.sha256 == demo.sha256
    assert record.formulary.version == "2026-12-demo"
    assert record.program_version == "0.1.0"


def test_record_timestamp_carries_the_time_zone(demo) -> None:
    record = verify(demo, agent="mannitol-20", volume="250")
    assert record.timestamp == "2026-12-02T08:30:00+01:00"
    assert datetime.fromisoformat(record.timestamp).utcoffset() is not None


def test_default_timestamp_is_local_time_with_offset(demo) -> None:
    request = parse_check_request(MAN_70)
    record = verify_order(request, parse_order({"agent": "mannitol-20", "volume": "250"}), demo, (), "AB")
    assert datetime.fromisoformat(record.timestamp).tzinfo is not None


def test_naive_time_is_refused(demo) -> None:
    request = parse_check_request(MAN_70)
    order = parse_order({"agent": "mannitol-20", "volume": "250"})
    with pytest.raises(ValueError, match="time zone"):
        verify_order(request, order, demo, (), "AB", now=datetime(2026, 12, 2, 8, 30))


def test_request_with_its_own_dose_is_a_programming_error(demo) -> None:
    request = parse_check_request(dict(MAN_70, agent="nacl-3", volume="250"))
    with pytest.raises(ValueError, match="takes the order separately"):
        verify_order(request, parse_order({"agent": "nacl-3", "volume": "250"}), demo, (), "AB")


def test_record_json_round_trips(demo) -> None:
    record = verify(demo, agent="mannitol-20", volume="3500", duration="30", stated_dose="1g/kg", line="peripheral")
    # The log keeps the record in full precision; its JSON document rounds each figure once, as declared.
    again = VerificationRecord.model_validate_json(record.model_dump_json())
    assert again == record
    data = json.loads(json.dumps(record.to_json(), allow_nan=False))
    assert data["decision"]["outcome"] == "refused"
    assert data["result"]["dose"]["solute_g"] == pytest.approx(700.0)
    assert {d["code"] for d in data["discrepancies"]} == {"stated-dose-mismatch"}


def test_record_text_names_who_when_what_and_the_decision(demo) -> None:
    record = verify(
        demo,
        agent="mannitol-20",
        volume="350",
        duration="20",
        line="central",
        stated_dose="1g/kg",
        accept={"volume-not-a-presentation": "drawn from a 500 mL bag"},
    )
    text = record.render_text()
    lines = text.splitlines()
    # One spelling per decision: the JSON value in capitals, in the heading and the decision line alike.
    assert lines[0] == "osmodose verification  RELEASED-WITH-ACCEPTED-WARNINGS: every warning accepted with a reason"
    assert "decision: RELEASED-WITH-ACCEPTED-WARNINGS" in lines
    assert lines[1] == "verified by AB at 2026-12-02T08:30:00+01:00 with osmodose 0.1.0"
    assert lines[2].startswith("formulary: Larkspur Point 7N neuro ICU (fictional demo unit) v2026-12-demo sha256 ")
    assert "order as written: agent mannitol-20, volume 350, duration 20, line central, stated-dose 1g/kg" in lines
    assert "  read as: mannitol-20 350 mL over 20 min, central line; stated dose 1 g/kg" in lines
    assert "  accepted by AB: volume-not-a-presentation: drawn from a 500 mL bag" in lines
    # The recomputation is the check report's own wording.
    assert "    solute 70.00 g (1.00 g/kg)   sodium load 0.0 mmol (0.00 mmol/kg)   osmolar load 384 mOsm" in lines
    assert lines[-1] == record.caution
