"""Invariants of the engine, checked with hypothesis over the plausible input ranges."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

from osmodose.case.inputs import parse_check_request
from osmodose.check.run import run_check
from osmodose.errors import InputError
from osmodose.formulary import Formulary
from osmodose.science import formulas as f
from tests.strategies import CATIONS, PROJECTING, SODIUM, TBW_L, VOLUME_L, choice, plausible_text

PROFILE = settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])

sodium, cations, tbw, volume = SODIUM, CATIONS, TBW_L, VOLUME_L


# --- the projection ----------------------------------------------------------------------------


@PROFILE
@given(sodium, cations, tbw, volume, volume)
def test_projection_is_monotonic_in_volume_and_never_passes_the_infusate(
    na: float, c: float, w: float, v1: float, v2: float
) -> None:
    small, large = sorted((v1, v2))
    first = f.projected_sodium(na, c, w, small)
    second = f.projected_sodium(na, c, w, large)
    tolerance = 1e-9 * max(na, c)
    if c >= na:
        assert na - tolerance <= first <= second + tolerance
        assert second <= c + tolerance
    else:
        assert na + tolerance >= first >= second - tolerance
        assert second >= c - tolerance


@PROFILE
@given(sodium, cations, tbw, volume)
def test_projection_at_one_litre_is_the_adrogue_madias_change(na: float, c: float, w: float, v: float) -> None:
    per_litre = f.sodium_change_per_litre(na, c, w)
    assert per_litre == pytest.approx((c - na) / (w + 1), rel=1e-9, abs=1e-9)


@PROFILE
@given(sodium, cations, tbw, st.floats(-30, 30).filter(lambda r: abs(r) > 1e-3))
def test_the_volume_for_a_change_projects_back_to_that_change(na: float, c: float, w: float, r: float) -> None:
    v = f.volume_for_sodium_change(na, c, w, r)
    reachable = (c - na) * r > 0 and abs(c - na) > abs(r)
    assert math.isnan(v) is not reachable
    if reachable:
        assert v > 0
        back = f.projected_sodium(na, c, w, v)
        assert back - na == pytest.approx(r, rel=1e-6, abs=1e-9)


# --- whole checks ------------------------------------------------------------------------------

weights = plausible_text("weight", 3)
ages = plausible_text("age")
sexes = choice("sex")
sodium_text = plausible_text("sodium", 1)


@PROFILE
@given(
    weight=weights,
    age=ages,
    sex=sexes,
    serum=sodium_text,
    agent=st.sampled_from(PROJECTING),
    share=st.floats(0.001, 0.95),
)
def test_target_rise_then_projecting_gives_the_target_back(
    demo: Formulary, weight: str, age: str, sex: str, serum: str, agent: str, share: float
) -> None:
    # Ask for a share of the way from serum to the infusate's Na + K (the reachable side), within +-30.
    gap = demo.agent(agent).cations_mmol_l - float(serum)
    rise = f"{max(-30.0, min(30.0, share * gap)):.2f}"
    assume(abs(float(rise)) >= 0.01)
    base = {"weight": weight, "age": age, "sex": sex, "sodium": serum, "agent": agent}
    try:
        asked = run_check(parse_check_request({**base, "target-rise": rise}), demo)
    except InputError as error:
        # Only a volume outside the plausible order size (0.1 to 5000 mL) may stop it.
        assert error.field == "target-rise"
        assert "outside the plausible range (accepted: 0.1 to 5000 mL)" in str(error)
        return
    assert asked.projected_sodium_rise_mmol_l == pytest.approx(float(rise), rel=1e-9, abs=1e-9)
    assert asked.dose is not None
    # Ordering that volume as such projects the same rise.
    again = run_check(parse_check_request({**base, "volume": f"{asked.dose.volume_ml!r} mL"}), demo)
    assert again.projected_sodium_rise_mmol_l == pytest.approx(float(rise), rel=1e-9, abs=1e-9)


def _quantity(low: float, high: float, *units: tuple[str, float]) -> st.SearchStrategy[str]:
    """A value inside [low, high] of the field's usual unit, typed bare or in one of `units`.

    Each unit comes with its factor from the usual unit (e.g. ("lb", 1 / 0.45359237) for kg).
    """
    choices = [("", 1.0), *units]
    return st.tuples(st.floats(low, high), st.sampled_from(choices)).map(
        lambda p: f"{p[0] * p[1][1]:.6g}{(' ' + p[1][0]) if p[1][0] else ''}"
    )


def _sloppy(low: float, high: float, *units: str) -> st.SearchStrategy[str]:
    """A number up to 10 % outside [low, high], bare or with a unit that may not fit the field."""
    span = high - low
    value = st.floats(low - 0.1 * span, high + 0.1 * span)
    return st.tuples(value, st.sampled_from(["", *units])).map(lambda p: f"{p[0]:.4g}{(' ' + p[1]) if p[1] else ''}")


# Factors: 1 lb = 0.45359237 kg; glucose 180.16, urea 60.06, N2 28.01, ethanol 46.07 g/mol
# (CIAAW atomic weights): x mmol/L = x * M / 10 mg/dL.
LB = ("lb", 1 / 0.45359237)
valid_order = st.one_of(
    st.fixed_dictionaries({}),
    st.fixed_dictionaries(
        {
            "agent": st.sampled_from([*PROJECTING, "mannitol-20"]),
            "dose": st.one_of(
                _quantity(0.1, 1.5, ("g/kg", 1.0)),
                _quantity(1, 10, ("mL/kg", 1.0)),
                _quantity(0.5, 3, ("mmol/kg", 1.0)),
                _quantity(1, 10, ("mOsm/kg", 1.0)),
                _quantity(5, 100, ("g", 1.0)),
                _quantity(10, 1000, ("mL", 1.0), ("L", 1e-3)),
            ).filter(lambda text: " " in text),
        },
        optional={"duration": _quantity(1, 600, ("min", 1.0), ("h", 1 / 60))},
    ),
    st.fixed_dictionaries(
        {"agent": st.sampled_from(PROJECTING), "volume": _quantity(1, 3000, ("mL", 1.0), ("L", 1e-3))},
        optional={"duration": _quantity(1, 600, ("min", 1.0)), "line": st.sampled_from(["central", "peripheral"])},
    ),
    st.fixed_dictionaries(
        {"agent": st.sampled_from(PROJECTING), "target-rise": _quantity(-30, 30, ("mmol/L", 1.0))},
    ),
)
valid_case = st.fixed_dictionaries(
    {
        "weight": _quantity(0.3, 400, ("kg", 1.0), LB),
        "age": _quantity(0, 120, ("year", 1.0), ("month", 12.0)),
        "sex": st.sampled_from(["female", "male"]),
        "sodium": _quantity(90, 200, ("mmol/L", 1.0), ("mEq/L", 1.0)),
    },
    optional={
        "height": _quantity(25, 250, ("cm", 1.0), ("m", 0.01)),
        "potassium": _quantity(1, 10, ("mmol/L", 1.0)),
        "glucose": _quantity(0.5, 100, ("mg/dL", 18.016)),
        "urea": _quantity(0.5, 100, ("mg/dL", 6.006)),
        "ethanol": _quantity(0, 200, ("mg/dL", 4.607)),
        "osmolality": _quantity(200, 450, ("mOsm/kg", 1.0), ("mmol/kg", 1.0)),
        "tbw-method": st.sampled_from(["fraction", "watson"]),
    },
)
valid_requests = st.tuples(valid_case, valid_order).map(lambda pair: {**pair[0], **pair[1]})
sloppy_requests = st.fixed_dictionaries(
    {
        "weight": _sloppy(0.3, 400, "kg", "lb", "g"),
        "age": _sloppy(0, 120, "year", "month"),
        "sex": st.sampled_from(["female", "male", "other"]),
        "sodium": _sloppy(90, 200, "mmol/L", "mEq/L", "mg/dL"),
    },
    optional={
        "height": _sloppy(25, 250, "cm", "m", "inch"),
        "glucose": _sloppy(0.5, 100, "mmol/L", "mg/dL"),
        "urea": _sloppy(0.5, 100, "mmol/L", "mg/dL"),
        "bun": _sloppy(1, 280, "mg/dL", "mmol/L"),
        "osmolality": _sloppy(200, 450, "mOsm/kg", "mmol/kg"),
        "agent": st.sampled_from([*PROJECTING, "mannitol-20", "unknown-agent"]),
        "dose": _sloppy(0, 3, "g/kg", "mL/kg", "mmol/kg", "mOsm/kg", "g", "mL", "mmol", "mOsm", "h"),
        "volume": _sloppy(0.1, 5000, "mL", "L"),
        "target-rise": _sloppy(-30, 30, "mmol/L"),
        "duration": _sloppy(1, 10080, "min", "h"),
        "line": st.sampled_from(["central", "peripheral", "arterial"]),
    },
)
requests = valid_requests | sloppy_requests


@settings(max_examples=400, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(fields=requests)
def test_random_requests_raise_nothing_but_input_errors(demo: Formulary, fields: dict[str, str]) -> None:
    try:
        result = run_check(parse_check_request(fields), demo)
    except InputError as error:
        assert str(error).startswith(f"{error.field}: ")
        return
    # Status is the worst finding, refusals come first, and every figure is a number or None.
    severities = [finding.severity for finding in result.findings]
    worst = "refuse" if "refuse" in severities else ("warn" if severities else "ok")
    assert result.status == worst
    assert severities == sorted(severities, key=lambda s: s != "refuse")
    assert math.isfinite(result.patient.total_body_water_l) and result.patient.total_body_water_l > 0
    for key in ("calculated_osmolality_mosm_kg", "osmolar_gap_mosm_kg", "projected_sodium_mmol_l"):
        value = getattr(result, key)
        assert value is None or math.isfinite(value)
    if result.dose is not None:
        assert result.dose.volume_ml > 0
        assert np.isfinite([result.dose.volume_ml, result.dose.sodium_mmol, result.dose.osmoles_mosm]).all()


@PROFILE
@given(
    weight=weights,
    serum=sodium_text,
    agent=st.sampled_from([*PROJECTING, "mannitol-20"]),
    volume_ml=st.floats(1, 3000).map(lambda x: f"{x:.1f}"),
    line=st.sampled_from([None, "central", "peripheral"]),
    duration=st.none() | st.floats(1, 600).map(lambda x: f"{x:.0f}"),
)
def test_findings_order_and_status(
    demo: Formulary, weight: str, serum: str, agent: str, volume_ml: str, line: str | None, duration: str | None
) -> None:
    fields = {"weight": weight, "age": "50", "sex": "female", "sodium": serum, "agent": agent, "volume": volume_ml}
    fields |= {"line": line, "duration": duration}
    result = run_check(parse_check_request(fields), demo)
    ranks = [2 if finding.severity == "refuse" else 1 for finding in result.findings]
    assert ranks == sorted(ranks, reverse=True)
    assert result.status == {0: "ok", 1: "warn", 2: "refuse"}[max(ranks, default=0)]
    for finding in result.findings:
        # Every finding is past its limit (where the rule has one): nothing fires at the limit or inside it.
        # Lower limits (a projected sodium too low, a measured osmolality too far below the calculated) are
        # past it from below; the fall is judged as a positive fall against a positive limit.
        if finding.limit is None or finding.value is None:
            continue
        if finding.code in ("projected-sodium-low", "osmolar-gap-negative"):
            assert finding.value < finding.limit
        elif finding.code != "sodium-fall-24h":
            assert finding.value > finding.limit


FIELDS = ["weight", "age", "sodium", "glucose", "bun", "osmolality", "dose", "volume", "target-rise", "duration"]
typed_text = st.lists(st.sampled_from([*"0123456789 .+-*/()^%eE,_", "kg", "mL", "mmol", "g", "L"]), max_size=10).map(
    "".join
)


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(field=st.sampled_from(FIELDS), text=typed_text)
def test_any_typed_text_in_a_field_is_read_or_refused_by_name(demo: Formulary, field: str, text: str) -> None:
    fields = {"weight": "70", "age": "40", "sex": "male", "sodium": "140", "agent": "nacl-3", "volume": "250"}
    if field in ("dose", "target-rise"):
        del fields["volume"]
    fields[field] = text
    try:
        run_check(parse_check_request(fields), demo)
    except InputError as error:
        assert error.field in (field, "agent")
