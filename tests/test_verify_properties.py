"""Properties: random orders never crash verification, and a refuse stays a refuse whatever is accepted."""

from __future__ import annotations

import contextlib
import io
import json

from hypothesis import HealthCheck, event, given, settings
from hypothesis import strategies as st

from osmodose.case.inputs import parse_check_request
from osmodose.cli.main import main
from osmodose.errors import InputError
from osmodose.verify import make_acceptance, parse_acceptance, parse_order, verify_order
from osmodose.verify.decision import decide
from osmodose.verify.discrepancies import CODES, Discrepancy
from osmodose.verify.log import LogEntry, encode_line
from tests.strategies import AGENTS, mostly
from tests.verify_helpers import NOW

CHECK_CODES = (
    "sodium-high",
    "projected-sodium-high",
    "osmolality-high",
    "osmolar-gap-high",
    "sodium-rise-24h",
    "sodium-fall-24h",
    "dose-per-kg",
    "rate-too-fast",
    "central-line-only",
    "peripheral-osmolarity",
)
ALL_CODES = CHECK_CODES + CODES

numbers = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True, width=32),
    st.floats(min_value=0.01, max_value=6000),
    st.integers(-10, 10000),
)


def typed(units: tuple[str, ...], usual: st.SearchStrategy[float], optional: bool = True) -> st.SearchStrategy[object]:
    """Text as a user might type it: a usual number with or without a unit, sometimes any number, unit or junk."""
    good = st.one_of(
        usual, usual.map(lambda x: f"{x:g}"), st.builds(lambda n, u: f"{n:g}{u}", usual, st.just(units[0]))
    )
    if optional:
        good = st.one_of(st.none(), good)
    bad = st.one_of(numbers, st.builds(lambda n, u: f"{n}{u}", numbers, st.sampled_from(units)), st.text(max_size=8))
    return mostly(good, bad)


order_fields = st.fixed_dictionaries(
    {
        "agent": mostly(st.sampled_from(AGENTS), st.text(max_size=6)),
        "volume": typed((" mL", "L", " g", "mL/kg"), st.sampled_from([30.0, 100.0, 250.0, 350.0, 3500.0]), False),
        "duration": typed(("min", " h", "s", " mL"), st.floats(1, 240)),
        "rate": typed((" mL/h", "mL/min", " L/h", " kg"), st.floats(10, 2000)),
        "line": st.sampled_from([None, "central", "peripheral", "PERIPHERAL", "arterial", ""]),
        "stated-dose": typed(
            (" g/kg", "mL/kg", " mmol/kg", " mOsm/kg", " g", " mmol", " mL", " mmol/L", ""), st.floats(0.01, 100)
        ),
        "stated-sodium": typed((" mmol/L", " mEq/L", " mg/dL", ""), st.floats(100, 170)),
    }
)
patient_fields = st.fixed_dictionaries(
    {
        "weight": mostly(st.floats(0.3, 400), st.sampled_from(["0.1", "176lb", "x", "-5"])),
        "age": mostly(st.floats(0, 120), st.sampled_from(["130", "old"])),
        "sex": mostly(st.sampled_from(["female", "male"]), st.just("other")),
        "sodium": mostly(st.floats(90, 200), st.sampled_from(["85", "1410"])),
        "glucose": st.sampled_from([None, "6", "200 mg/dL"]),
        "urea": st.sampled_from([None, "5", "40"]),
        "osmolality": st.sampled_from([None, "300", "330", "250"]),
    }
)
accepts = st.lists(
    st.tuples(st.sampled_from((*ALL_CODES, "not-a-code")), st.sampled_from(["ok", "checked with the prescriber"])),
    max_size=4,
)


@settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    patient=patient_fields,
    order=order_fields,
    accepted=accepts,
    initials=mostly(st.sampled_from(["AB", "c.d."]), st.sampled_from(["", "x1"])),
)
def test_random_orders_never_crash_verify(demo, patient, order, accepted, initials) -> None:  # type: ignore[no-untyped-def]
    try:
        request = parse_check_request(patient)
        written = parse_order(order)
        acceptances = [parse_acceptance(f"{code}={reason}") for code, reason in accepted]
        record = verify_order(request, written, demo, acceptances, initials, now=NOW)
    except InputError as error:
        assert str(error).startswith(f"{error.field}: ")
        event(f"input error: {error.field}")
        return
    event(f"verified: {record.outcome}")
    # Whatever came out can be shown, serialised as strict JSON and logged.
    assert record.render_text().endswith(record.caution + "\n")
    json.dumps(record.to_json(), allow_nan=False)
    encode_line(LogEntry(sequence=1, previous_sha256="0" * 64, record=record))
    severities = {f.severity for f in record.result.findings} | {d.severity for d in record.discrepancies}
    if "refuse" in severities:
        assert record.outcome == "refused"


@settings(max_examples=120, deadline=None)
@given(patient=patient_fields, order=order_fields, data=st.data())
def test_a_refuse_stays_a_refuse_whatever_is_accepted(demo, patient, order, data) -> None:  # type: ignore[no-untyped-def]
    try:
        request = parse_check_request(patient)
        written = parse_order(order)
        bare = verify_order(request, written, demo, (), "AB", now=NOW)
    except InputError:
        return
    found = sorted({f.code for f in bare.result.findings} | {d.code for d in bare.discrepancies})
    chosen = data.draw(st.lists(st.sampled_from(found), unique=True) if found else st.just([]))
    acceptances = [make_acceptance(code, "accepted after a call with the prescriber") for code in chosen]
    record = verify_order(request, written, demo, acceptances, "AB", now=NOW)
    if bare.outcome == "refused":
        assert record.outcome == "refused"
        assert record.decision.refusals == bare.decision.refusals
    accepted = {a.code for a in record.decision.accepted}
    assert accepted.isdisjoint(record.decision.refusals)


severities = st.sampled_from(["warn", "refuse"])
items = st.lists(
    st.builds(
        lambda code, severity: Discrepancy(
            code=code, severity=severity, message="m", stated=None, recomputed=None, unit=""
        ),
        st.sampled_from(ALL_CODES),
        severities,
    ),
    max_size=8,
)


@settings(max_examples=300, deadline=None)
@given(found=items, data=st.data())
def test_decision_rules_over_any_findings(found, data) -> None:  # type: ignore[no-untyped-def]
    codes = sorted({i.code for i in found})
    chosen = data.draw(st.lists(st.sampled_from(codes), unique=True) if codes else st.just([]))
    decision = decide(found, [make_acceptance(c, "reason given in full") for c in chosen], "AB")
    refused = {i.code for i in found if i.severity == "refuse"}
    warned = {i.code for i in found} - refused
    if refused:
        assert decision.outcome == "refused"
    elif warned - set(chosen):
        assert decision.outcome == "held"
    elif warned:
        assert decision.outcome == "released-with-accepted-warnings"
    else:
        assert decision.outcome == "released"
    assert {a.code for a in decision.accepted} == warned & set(chosen)
    assert {n.code for n in decision.not_accepted} == refused & set(chosen)


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(patient=patient_fields, order=order_fields, accepted=accepts)
def test_random_orders_never_crash_the_verify_command(tmp_path_factory, patient, order, accepted) -> None:  # type: ignore[no-untyped-def]
    log = tmp_path_factory.mktemp("cli") / "log.jsonl"
    argv = ["verify", "--initials", "AB", "--log", str(log)]
    for name, value in [*patient.items(), *order.items()]:
        if value is not None:
            argv += [f"--{name}={value}"]
    for code, reason in accepted:
        argv += [f"--accept={code}={reason}"]
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        try:
            status = main(argv)
        except SystemExit as stopped:  # argparse: a required option left out
            status = stopped.code
    assert status in (0, 2, 3, 4)
    assert "Traceback" not in err.getvalue()
    if status == 2:
        assert err.getvalue().startswith("osmodose")
        assert not log.exists()
    else:
        assert log.is_file()
