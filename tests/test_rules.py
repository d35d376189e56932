"""Each safety rule at each severity, with the numbers worked by hand.

Unless a test says otherwise the patient is a 40-year-old man of 70 kg: total body water
0.6 x 70 = 42 L (Adrogue HJ, Madias NE. N Engl J Med 2000;342:1581-9). Limits are the demo
formulary's, which are the documented defaults: sodium warn 155 (common practice) and refuse
160 mmol/L (US Joint Trauma System guideline); osmolality warn 310 (common practice) and refuse
320 mOsm/kg (Hinson HE et al. J Intensive Care Med 2013); osmolar gap warn 10 mOsm/kg (above the
published upper normal, McMaster Textbook of Internal Medicine) and refuse 20 mOsm/kg (common
practice); 24 h rise warn 8 (Verbalis JG et al. Am J Med 2013) and refuse 10 mmol/L (Spasovski G
et al. Eur J Endocrinol 2014); fall warn 10 mmol/L (secondary sources); peripheral osmolarity
warn 900 mOsm/L (parenteral nutrition guidance, secondary). Per-kg dose limits and the maximum
rate are the demo unit's own (invented). A finding fires strictly above its limit.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from osmodose.case.inputs import parse_check_request
from osmodose.check.results import CheckResult, Finding
from osmodose.check.run import run_check
from osmodose.formulary import Formulary, load_formulary

MAN = {"weight": "70", "age": "40", "sex": "male"}

# Agents without per-kg limits, so the sodium rules can be seen alone (invented test unit).
PLAIN = """\
[formulary]
name = "Rules test unit (invented)"
version = "1"

[[agents]]
id = "nacl-3"
label = "Sodium chloride 3 %"
solute = "sodium chloride"
concentration = "3% w/v"
route = "peripheral"

[[agents]]
id = "glucose-5"
label = "Glucose 5 %"
solute = "glucose"
concentration = "5% w/v"
route = "peripheral"
"""


@pytest.fixture(scope="module")
def plain(tmp_path_factory: pytest.TempPathFactory) -> Formulary:
    path: Path = tmp_path_factory.mktemp("plain") / "plain.toml"
    path.write_text(PLAIN, encoding="utf-8")
    return load_formulary(path)


def check(formulary: Formulary, **fields: str) -> CheckResult:
    typed = {**MAN, **{key.replace("_", "-"): value for key, value in fields.items()}}
    return run_check(parse_check_request(typed), formulary)


def found(result: CheckResult) -> list[tuple[str, str]]:
    return [(f.code, f.severity) for f in result.findings]


def only(result: CheckResult, code: str) -> Finding:
    matches = [f for f in result.findings if f.code == code]
    assert len(matches) == 1, result.findings
    return matches[0]


# --- current sodium ----------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("sodium", "expected"),
    [
        ("155", []),  # at the limit: not above it
        ("156", [("sodium-high", "warn")]),
        ("160", [("sodium-high", "warn")]),
        ("161", [("sodium-high", "refuse")]),
    ],
)
def test_current_sodium_against_the_ceilings(demo: Formulary, sodium: str, expected: list) -> None:
    result = check(demo, sodium=sodium)
    assert found(result) == expected


def test_current_sodium_messages(demo: Formulary) -> None:
    assert only(check(demo, sodium="156"), "sodium-high").message == (
        "serum sodium 156.0 mmol/L is above the warn limit of 155 mmol/L"
    )
    refused = only(check(demo, sodium="161"), "sodium-high")
    assert refused.message == "serum sodium 161.0 mmol/L is above the refuse limit of 160 mmol/L"
    assert (refused.value, refused.limit, refused.unit) == (161.0, 160.0, "mmol/L")


# --- projected sodium --------------------------------------------------------------------------


def test_projected_sodium_above_the_warn_ceiling(demo: Formulary) -> None:
    # 30 mL of 23.4 %, labelled 4 mEq/mL = 4000 mmol/L (product label), at Na 153:
    # 153 + 0.03 (4000 - 153) / (42 + 0.03) = 153 + 115.41 / 42.03 = 155.746 mmol/L > 155;
    # the rise, 2.75, is within 8.
    result = check(demo, sodium="153", agent="nacl-23.4", volume="30")
    assert result.projected_sodium_mmol_l == pytest.approx(155.746, abs=1e-3)
    assert found(result) == [("projected-sodium-high", "warn")]
    assert only(result, "projected-sodium-high").message == (
        "projected sodium 155.7 mmol/L is above the warn limit of 155 mmol/L"
    )


def test_projected_sodium_above_the_refuse_ceiling(demo: Formulary) -> None:
    # At Na 158 the same vial: 158 + 0.03 (4000 - 158) / 42.03 = 160.742 > 160 (refuse);
    # the current 158 > 155 is a warning of its own.
    result = check(demo, sodium="158", agent="nacl-23.4", volume="30")
    assert result.projected_sodium_mmol_l == pytest.approx(160.742, abs=1e-3)
    assert found(result) == [("projected-sodium-high", "refuse"), ("sodium-high", "warn")]
    assert result.status == "refuse"


def test_a_hypotonic_fluid_in_hypernatraemia_is_not_refused_by_the_sodium_ceilings(demo: Formulary) -> None:
    # The hypernatraemia example (Adrogue HJ, Madias NE. N Engl J Med 2000;342:1493-9; from memory):
    # a 76-year-old man of 68 kg, Na 168, TBW 0.5 x 68 = 34 L, 1 L of 5 % dextrose:
    # (0 - 168) / 35 = -4.8 mmol/L, to 163.2. The fluid is the treatment of the high sodium:
    # neither the current 168 nor the projected 163.2 (both above 160) may refuse it.
    result = check(demo, weight="68", age="76", sodium="168", agent="glucose-5", volume="1 L")
    assert result.projected_sodium_mmol_l == pytest.approx(163.2, abs=1e-9)
    assert found(result) == []
    assert result.status == "ok"


def test_without_an_order_a_high_sodium_is_still_judged(demo: Formulary) -> None:
    assert found(check(demo, weight="68", age="76", sodium="168")) == [("sodium-high", "refuse")]


# --- osmolality --------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("labs", "expected"),
    [
        ({"osmolality": "310"}, []),
        ({"osmolality": "312"}, [("osmolality-high", "warn")]),
        ({"osmolality": "321"}, [("osmolality-high", "refuse")]),
        # Calculated only: 2 x 150 + 10 + 6 = 316 mOsm/kg (McMaster Textbook of Internal Medicine).
        ({"glucose": "10", "urea": "6"}, [("osmolality-high", "warn")]),
        # Calculated 2 x 150 + 15 + 6 = 321: refuse.
        ({"glucose": "15", "urea": "6"}, [("osmolality-high", "refuse")]),
        # A measured value is judged in place of the calculated one (316 calculated, 310 measured, not above 310).
        ({"glucose": "10", "urea": "6", "osmolality": "310"}, []),
        # Measured 16 below calculated (300 vs 316): more than 10 below points to a unit slip or the sample
        # (common practice).
        ({"glucose": "10", "urea": "6", "osmolality": "300"}, [("osmolar-gap-negative", "warn")]),
        # No glucose or urea, no measured value: nothing to judge, so no finding.
        ({"glucose": "40"}, []),
    ],
)
def test_osmolality_measured_else_calculated(demo: Formulary, labs: dict[str, str], expected: list) -> None:
    result = check(demo, sodium="150", **labs)
    assert found(result) == expected


def test_osmolality_message(demo: Formulary) -> None:
    assert only(check(demo, sodium="150", glucose="10", urea="6"), "osmolality-high").message == (
        "serum osmolality 316.0 mOsm/kg is above the warn limit of 310 mOsm/kg"
    )


# --- osmolar gap -------------------------------------------------------------------------------


def test_osmolar_gap_warns_for_mannitol_above_the_upper_normal(demo: Formulary) -> None:
    # Calculated 2 x 135 + 5 + 5 = 280; measured 295; gap 15 > 10 (normal below 10: McMaster Textbook of
    # Internal Medicine) and not above 20. 295 is within the osmolality warn limit of 310.
    result = check(demo, sodium="135", glucose="5", urea="5", osmolality="295", agent="mannitol-20", dose="0.5g/kg")
    assert result.osmolar_gap_mosm_kg == pytest.approx(15.0)
    assert found(result) == [("osmolar-gap-high", "warn")]
    assert only(result, "osmolar-gap-high").message == "osmolar gap 15.0 mOsm/kg is above the warn limit of 10 mOsm/kg"


def test_osmolar_gap_refuses_mannitol_above_the_hold_threshold(demo: Formulary) -> None:
    # Measured 305 against 280 calculated: gap 25 > 20, the common hold threshold (common practice; sources
    # vary from 10 to 20). A refuse, so no accepted reason can release it.
    result = check(demo, sodium="135", glucose="5", urea="5", osmolality="305", agent="mannitol-20", dose="0.5g/kg")
    assert found(result) == [("osmolar-gap-high", "refuse")]
    assert only(result, "osmolar-gap-high").message == (
        "osmolar gap 25.0 mOsm/kg is above the refuse limit of 20 mOsm/kg"
    )


@pytest.mark.parametrize("order", [{}, {"agent": "nacl-3", "volume": "100"}])
def test_osmolar_gap_is_not_judged_without_mannitol(demo: Formulary, order: dict[str, str]) -> None:
    result = check(demo, sodium="135", glucose="5", urea="5", osmolality="305", **order)
    assert result.osmolar_gap_mosm_kg == pytest.approx(25.0)
    assert "osmolar-gap-high" not in [code for code, _ in found(result)]


def test_an_osmolar_gap_at_the_limit_is_not_above_it(demo: Formulary) -> None:
    # 280 calculated, 300 measured: gap exactly 20, the refuse limit: above the warn limit of 10, not refused.
    result = check(demo, sodium="135", glucose="5", urea="5", osmolality="300", agent="mannitol-20", dose="0.5g/kg")
    assert found(result) == [("osmolar-gap-high", "warn")]


# --- 24 h rise and fall ------------------------------------------------------------------------


def test_sodium_rise_above_the_24h_warn_limit(plain: Formulary) -> None:
    # Na 110, 1 L of 3 % (513.35 mmol/L): 1 x (513.35 - 110) / (42 + 1) = +9.38 mmol/L; 8 < 9.38 <= 10.
    result = check(plain, sodium="110", agent="nacl-3", volume="1 L")
    assert found(result) == [("sodium-rise-24h", "warn")]
    assert only(result, "sodium-rise-24h").message == (
        "projected sodium rise from this order 9.4 mmol/L is above the warn limit of 8 mmol/L"
    )


def test_sodium_rise_above_the_24h_refuse_limit(plain: Formulary) -> None:
    # 1.5 L: 1.5 x 403.35 / 43.5 = +13.91 mmol/L > 10.
    result = check(plain, sodium="110", agent="nacl-3", volume="1500")
    assert result.projected_sodium_rise_mmol_l == pytest.approx(13.909, abs=1e-3)
    assert found(result) == [("sodium-rise-24h", "refuse")]


def test_sodium_fall_above_the_24h_warn_limit(plain: Formulary) -> None:
    # 68 kg man of 76 (TBW 34 L), Na 168, 2.5 L of 5 % glucose: 2.5 x (0 - 168) / 36.5 = -11.51 mmol/L,
    # a fall above 10 (chronic hypernatraemia: about 10 a day, secondary sources) and not above 12.
    result = check(plain, weight="68", age="76", sodium="168", agent="glucose-5", volume="2.5 L")
    assert result.projected_sodium_rise_mmol_l == pytest.approx(-11.507, abs=1e-3)
    assert found(result) == [("sodium-fall-24h", "warn")]
    assert only(result, "sodium-fall-24h").message == (
        "projected sodium fall from this order 11.5 mmol/L is above the warn limit of 10 mmol/L"
    )


def test_sodium_fall_above_the_24h_refuse_limit(plain: Formulary) -> None:
    # 3 L: 3 x (0 - 168) / 37 = -13.62 mmol/L, above the refuse limit of 12 (common practice, symmetric
    # with the rise limits).
    result = check(plain, weight="68", age="76", sodium="168", agent="glucose-5", volume="3 L")
    assert result.projected_sodium_rise_mmol_l == pytest.approx(-13.622, abs=1e-3)
    assert found(result) == [("sodium-fall-24h", "refuse")]


@pytest.mark.parametrize(
    ("volume", "expected"),
    [
        # 70 kg man (TBW 42 L), Na 135, 5 % glucose (no sodium): 0.5 L: 135 x 42 / 42.5 = 133.4, fall 1.6.
        ("0.5 L", []),
        # 1.5 L: 135 x 42 / 43.5 = 130.3: not below 130.
        ("1.5 L", []),
        # 2 L: 135 x 42 / 44 = 128.9 < 130 (moderate hyponatraemia, common practice).
        ("2 L", [("projected-sodium-low", "warn")]),
        # 4 L: 135 x 42 / 46 = 123.3 < 125 (profound), and the fall of 11.7 is above the warn limit of 10.
        ("4 L", [("projected-sodium-low", "refuse"), ("sodium-fall-24h", "warn")]),
    ],
)
def test_an_order_that_lowers_sodium_is_judged_against_the_low_limits(
    plain: Formulary, volume: str, expected: list
) -> None:
    assert found(check(plain, sodium="135", agent="glucose-5", volume=volume)) == expected


def test_the_rise_limits_do_not_judge_osmotherapy_from_a_normal_sodium(plain: Formulary) -> None:
    # Na 140, 1.5 L of 3 %: 1.5 x (513.35 - 140) / 43.5 = +12.87, above the 24 h refuse limit of 10, but the
    # rise limits protect a brain adapted to a low sodium (below 135: Spasovski 2014, Verbalis 2013). The
    # projected 152.9 is under the sodium warn limit of 155, so nothing is crossed and a note says why.
    result = check(plain, sodium="140", agent="nacl-3", volume="1500")
    assert found(result) == []
    assert any(note.startswith("The 24 h rise limits apply from a starting sodium below 135") for note in result.notes)


def test_high_risk_of_osmotic_demyelination_refuses_a_rise_above_eight(plain: Formulary) -> None:
    # Na 110 with potassium 3.0 (hypokalaemia: high risk, Verbalis 2013): 1 L of 3 % gives +9.38, above 8.
    result = check(plain, sodium="110", potassium="3.0", agent="nacl-3", volume="1 L")
    assert found(result) == [("sodium-rise-24h", "refuse")]
    assert only(result, "sodium-rise-24h").limit == 8.0


def test_mannitol_without_any_osmolality_is_warned(demo: Formulary) -> None:
    # Sodium only: no measured osmolality and no glucose or urea to calculate one.
    result = check(demo, sodium="140", agent="mannitol-20", dose="0.5g/kg")
    assert found(result) == [("osmolality-unknown", "warn")]


# --- per-kg dose limits ------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("dose", "expected"),
    [
        ("1g/kg", []),  # 70 g = 350 mL of 20 %: exactly the warn limit, not above it
        ("1.2g/kg", [("dose-per-kg", "warn")]),
        ("1.6g/kg", [("dose-per-kg", "refuse")]),
    ],
)
def test_mannitol_dose_in_grams_per_kg(demo: Formulary, dose: str, expected: list) -> None:
    # Glucose and urea give a known osmolality (2 x 140 + 5 + 5 = 290), so the dose is all that is judged.
    assert found(check(demo, sodium="140", glucose="5", urea="5", agent="mannitol-20", dose=dose)) == expected


def test_dose_message_in_grams_per_kg(demo: Formulary) -> None:
    finding = only(check(demo, sodium="140", agent="mannitol-20", dose="1.2g/kg"), "dose-per-kg")
    assert finding.message == "dose 1.20 g/kg is above the agent's warn limit of 1 g/kg"
    assert finding.unit == "g/kg"


@pytest.mark.parametrize(
    ("volume", "expected", "per_kg"),
    [
        # 420 mL / 70 kg = 6 mL/kg > 5 (warn); rise 0.42 x 373.35 / 42.42 = 3.70, within 8.
        ("420", [("dose-per-kg", "warn")], 6.0),
        # 800 mL / 70 kg = 11.43 mL/kg > 10 (refuse); rise 0.8 x 373.35 / 42.8 = 6.98.
        ("800", [("dose-per-kg", "refuse")], 800 / 70),
    ],
)
def test_saline_volume_in_millilitres_per_kg(demo: Formulary, volume: str, expected: list, per_kg: float) -> None:
    result = check(demo, sodium="140", agent="nacl-3", volume=volume)
    assert found(result) == expected
    assert only(result, "dose-per-kg").value == pytest.approx(per_kg)


def test_bicarbonate_dose_in_millimoles_per_kg(demo: Formulary) -> None:
    # 2.5 mmol/kg x 70 kg = 175 mmol of sodium > 2 mmol/kg (warn).
    result = check(demo, sodium="140", agent="bicarb-8.4", dose="2.5mmol/kg")
    assert result.dose is not None
    assert result.dose.sodium_mmol == pytest.approx(175.0)
    assert found(result) == [("dose-per-kg", "warn")]
    assert (
        only(result, "dose-per-kg").message == "sodium dose 2.50 mmol/kg is above the agent's warn limit of 2 mmol/kg"
    )


# --- rate and line -----------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("duration", "expected"),
    [
        ("10", []),  # 30 mL / 10 min = 180 mL/h: the maximum, not above it
        ("5", [("rate-too-fast", "refuse")]),  # 30 mL / 5 min = 360 mL/h
    ],
)
def test_maximum_rate(demo: Formulary, duration: str, expected: list) -> None:
    result = check(demo, sodium="140", agent="nacl-23.4", volume="30", duration=duration, line="central")
    assert found(result) == expected


def test_maximum_rate_message(demo: Formulary) -> None:
    result = check(demo, sodium="140", agent="nacl-23.4", volume="30", duration="5", line="central")
    assert only(result, "rate-too-fast").message == "rate 360 mL/h is faster than the agent's maximum of 180 mL/h"


def test_a_central_only_agent_on_a_peripheral_line_is_refused(demo: Formulary) -> None:
    # 23.4 % NaCl: 8008 mOsm/L (234 / 58.44 x 2 x 1000), central line only (common practice).
    result = check(demo, sodium="140", agent="nacl-23.4", volume="30", line="peripheral")
    assert found(result) == [("central-line-only", "refuse")]
    finding = only(result, "central-line-only")
    assert finding.message == "this agent (8008 mOsm/L) is for a central line only and is ordered peripheral"
    assert finding.limit is None


def test_a_central_only_agent_on_a_central_line_is_fine(demo: Formulary) -> None:
    assert found(check(demo, sodium="140", agent="nacl-23.4", volume="30", line="central")) == []


def test_a_peripheral_agent_above_the_osmolarity_limit_is_warned(demo: Formulary) -> None:
    # 3 % NaCl, labelled 1027 mOsm/L (product label) > 900 mOsm/L on a peripheral line.
    result = check(demo, sodium="140", agent="nacl-3", volume="250", line="peripheral")
    assert found(result) == [("peripheral-osmolarity", "warn")]
    assert only(result, "peripheral-osmolarity").message == (
        "infusate osmolarity on a peripheral line 1027.0 mOsm/L is above the warn limit of 900 mOsm/L"
    )


def test_isotonic_saline_on_a_peripheral_line_is_fine(demo: Formulary) -> None:
    assert found(check(demo, sodium="140", agent="nacl-0.9", volume="500", line="peripheral")) == []


@pytest.mark.parametrize(("agent", "volume"), [("nacl-23.4", "30"), ("nacl-3", "250"), ("mannitol-20", "250")])
def test_without_a_line_there_is_no_line_finding(demo: Formulary, agent: str, volume: str) -> None:
    result = check(demo, sodium="140", agent=agent, volume=volume)
    codes = {code for code, _ in found(result)}
    assert not codes & {"central-line-only", "peripheral-osmolarity"}


# --- status ------------------------------------------------------------------------------------


def test_refusals_are_listed_first_and_the_status_is_the_worst(demo: Formulary) -> None:
    # Peripheral 3 % at 14.29 mL/kg (refuse > 10), rise 9.37 (warn > 8), 1027 mOsm/L peripheral (warn).
    result = check(demo, sodium="110", agent="nacl-3", volume="1 L", line="peripheral")
    assert found(result) == [
        ("dose-per-kg", "refuse"),
        ("sodium-rise-24h", "warn"),
        ("peripheral-osmolarity", "warn"),
    ]
    assert result.status == "refuse"


def test_no_finding_is_ok(demo: Formulary) -> None:
    result = check(demo, sodium="140", glucose="5", urea="5")
    assert (result.status, result.findings) == ("ok", [])


# --- a batch is many single checks -------------------------------------------------------------

BATCH = [
    {"sodium": "110", "agent": "nacl-3", "volume": "1L", "line": "peripheral"},
    {"weight": "68", "age": "76", "sodium": "168", "agent": "glucose-5", "volume": "1L"},
    {"sex": "female", "sodium": "140", "glucose": "5", "urea": "5", "osmolality": "330"},
    {"sodium": "135", "glucose": "5", "urea": "5", "osmolality": "305", "agent": "mannitol-20", "dose": "1.2g/kg"},
    {"sodium": "140", "agent": "nacl-23.4", "volume": "30", "duration": "5", "line": "peripheral"},
    {"sodium": "140", "agent": "bicarb-8.4", "dose": "2.5mmol/kg"},
]


def test_rules_over_a_batch_give_each_row_the_findings_of_its_own_check(demo: Formulary) -> None:
    import numpy as np

    from osmodose.check.engine import Cases, compute
    from osmodose.check.judging import REFUSE, WARN
    from osmodose.check.rules import apply_rules
    from osmodose.check.run import cases_from_request

    requests = [parse_check_request({**MAN, **row}) for row in BATCH]
    singles = [
        cases_from_request(r, demo.agents.index(demo.agent(r.dose.agent_id)) if r.dose else -1, False) for r in requests
    ]

    def column(name: str) -> object:
        values = [getattr(case, name) for case in singles]
        if isinstance(values[0], dict):
            return {key: np.concatenate([v[key] for v in values]) for key in values[0]}
        return np.concatenate(values)

    batch = Cases(**{name: column(name) for name in Cases.__dataclass_fields__})
    figures = compute(batch, demo.agents, demo.settings)
    outcomes = apply_rules(batch, figures, demo.agents, demo.limits, np.array([r.line or "" for r in requests]))
    severity = {WARN: "warn", REFUSE: "refuse"}
    for row, request in enumerate(requests):
        in_batch = sorted((o.code, severity[int(o.severity[row])]) for o in outcomes if o.severity[row] > 0)
        alone = run_check(request, demo)
        assert in_batch == sorted(found(alone)), BATCH[row]
        projected = figures.projected_sodium[row]
        assert (None if np.isnan(projected) else float(projected)) == alone.projected_sodium_mmol_l
