"""The rules on the patient and the labs themselves, each at, just under and just over its limit.

The patient is a 45-year-old man of 70 kg unless a test says otherwise: total body water
0.6 x 70 = 42 L (Adrogue HJ, Madias NE. N Engl J Med 2000). Limits are the documented defaults,
each with its source in osmodose/formulary/limits.py; the numbers beside each case are worked by
hand. A finding fires strictly past its limit, except "not hypotonic" and "obese", which fire at
their limit too (an effective osmolality of 275 is not hypotonic; a BMI of 30 is obesity).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from osmodose.case.inputs import parse_check_request
from osmodose.check.results import CheckResult, Finding
from osmodose.check.run import run_check
from osmodose.errors import InputError
from osmodose.formulary import Formulary, load_formulary

MAN = {"weight": "70", "age": "45", "sex": "male"}


def check(formulary: Formulary, **fields: object) -> CheckResult:
    typed = {**MAN, **{key.replace("_", "-"): value for key, value in fields.items()}}
    return run_check(parse_check_request(typed), formulary)


def codes(result: CheckResult) -> dict[str, str]:
    return {f.code: f.severity for f in result.findings}


def only(result: CheckResult, code: str) -> Finding:
    [finding] = [f for f in result.findings if f.code == code]
    return finding


# --- hyponatraemia and hypokalaemia, with or without an order -----------------------------------
# Spasovski G et al. Eur J Endocrinol 2014 (from memory): moderate 125-129, profound below 125 mmol/L.


@pytest.mark.parametrize(
    ("sodium", "expected"),
    [
        ("130", {}),  # at the moderate limit: mild hyponatraemia, no finding
        ("129.9", {"hyponatraemia-moderate": "warn"}),
        ("125", {"hyponatraemia-moderate": "warn"}),  # at the profound limit: still moderate
        ("124.9", {"hyponatraemia-profound": "warn"}),  # profound replaces moderate
        ("108", {"hyponatraemia-profound": "warn"}),
    ],
)
def test_a_low_sodium_is_a_warning_of_the_labs_alone(demo: Formulary, sodium: str, expected: dict) -> None:
    result = check(demo, sodium=sodium)
    assert codes(result) == expected
    assert result.status == ("warn" if expected else "ok")


def test_the_hyponatraemia_messages(demo: Formulary) -> None:
    assert only(check(demo, sodium="121"), "hyponatraemia-profound").message == (
        "serum sodium 121 mmol/L is below the warn limit of 125 mmol/L: profound hyponatraemia (Spasovski 2014); "
        "look for its cause and for symptoms, and re-measure"
    )
    moderate = only(check(demo, sodium="127"), "hyponatraemia-moderate")
    assert moderate.message == (
        "serum sodium 127 mmol/L is below the warn limit of 130 mmol/L: moderate hyponatraemia (Spasovski 2014)"
    )
    assert (moderate.value, moderate.limit, moderate.unit) == (127.0, 130.0, "mmol/L")


@pytest.mark.parametrize(
    ("potassium", "expected"),
    [
        # Severe hypokalaemia below 2.5 mmol/L (common practice, clinical reviews, from memory).
        ("2.6", {}),
        ("2.5", {}),  # at the limit
        ("2.49", {"hypokalaemia-severe": "warn"}),
        ("2.4", {"hypokalaemia-severe": "warn"}),
    ],
)
def test_severe_hypokalaemia_is_a_warning_of_the_labs(demo: Formulary, potassium: str, expected: dict) -> None:
    assert codes(check(demo, sodium="140", potassium=potassium)) == expected


def test_the_hypokalaemia_message_says_potassium_raises_sodium(demo: Formulary) -> None:
    assert only(check(demo, sodium="140", potassium="2.4"), "hypokalaemia-severe").message == (
        "serum potassium 2.4 mmol/L is below the warn limit of 2.5 mmol/L: severe hypokalaemia; "
        "replacing potassium raises serum sodium too"
    )


# --- an osmolar gap with no mannitol ---------------------------------------------------------------
# Gap = measured - (2 Na + glucose + urea) (McMaster); normal below 10 mOsm/kg (McMaster).


@pytest.mark.parametrize(
    ("osmolality", "expected"),
    [
        ("302", {}),  # 2 x 140 + 6 + 6 = 292; gap 10: at the limit
        ("302.5", {"osmolar-gap-unexplained": "warn"}),  # gap 10.5
        ("301.5", {}),  # gap 9.5
    ],
)
def test_an_osmolar_gap_with_no_mannitol_is_warned(demo: Formulary, osmolality: str, expected: dict) -> None:
    assert codes(check(demo, sodium="140", glucose="6", urea="6", osmolality=osmolality)) == expected


def test_the_unexplained_gap_names_the_unmeasured_osmoles_and_mannitol_keeps_its_own_rule(demo: Formulary) -> None:
    result = check(demo, sodium="140", glucose="6", urea="6", osmolality="306")  # gap 14
    assert only(result, "osmolar-gap-unexplained").message == (
        "osmolar gap 14.0 mOsm/kg is above the warn limit of 10 mOsm/kg with no mannitol ordered: exclude "
        "unmeasured osmoles (toxic alcohols such as methanol or ethylene glycol, ethanol not entered, mannitol "
        "given elsewhere) before hyperosmolar therapy"
    )
    mannitol = check(demo, sodium="140", glucose="6", urea="6", osmolality="306", agent="mannitol-20", volume="250")
    assert "osmolar-gap-unexplained" not in codes(mannitol)
    assert codes(mannitol)["osmolar-gap-high"] == "warn"


# --- tonicity: corrected sodium and the "not hypotonic" warning -----------------------------------


@pytest.mark.parametrize(
    ("glucose", "katz", "hillier"),
    [
        # Katz MA. N Engl J Med 1973: +1.6 per 100 mg/dL above 100; Hillier TA et al. Am J Med 1999: +2.4.
        ("600mg/dL", 138.0, 142.0),  # Na 130: 130 + 1.6 x 5 = 138.0; 130 + 2.4 x 5 = 142.0
        ("100mg/dL", 130.0, 130.0),  # at 100 mg/dL: no correction
        ("90mg/dL", 130.0, 130.0),  # below: no correction
        ("200mg/dL", 131.6, 132.4),  # one 100 mg/dL step
    ],
)
def test_sodium_corrected_for_glucose(demo: Formulary, glucose: str, katz: float, hillier: float) -> None:
    corrected = check(demo, sodium="130", glucose=glucose).corrected_sodium_mmol_l
    assert corrected is not None
    assert (corrected.katz, corrected.hillier) == (pytest.approx(katz), pytest.approx(hillier))


def test_no_corrected_sodium_without_a_glucose(demo: Formulary) -> None:
    result = check(demo, sodium="130")
    assert result.corrected_sodium_mmol_l is None
    assert result.to_json()["corrected_sodium_mmol_l"] is None


@pytest.mark.parametrize(
    ("glucose", "fires"),
    [
        # Na 126: effective osmolality 2 x 126 + glucose (mmol/L); hypotonic below 275 (Spasovski 2014).
        ("23", True),  # 252 + 23 = 275: at the limit, not hypotonic
        ("22.9", False),  # 274.9: hypotonic
        ("23.1", True),  # 275.1
        ("45", True),  # 297: the scenario of the issue
    ],
)
def test_an_order_raising_a_low_sodium_that_is_not_hypotonic_is_warned(
    demo: Formulary, glucose: str, fires: bool
) -> None:
    result = check(demo, sodium="126", glucose=glucose, agent="nacl-3", volume="250", duration="30")
    assert ("hyponatraemia-not-hypotonic" in codes(result)) is fires


def test_the_not_hypotonic_message_says_why(demo: Formulary) -> None:
    result = check(demo, sodium="126", glucose="45", agent="nacl-3", volume="250", duration="30")
    finding = only(result, "hyponatraemia-not-hypotonic")
    assert finding.severity == "warn"
    assert (finding.value, finding.limit) == (297.0, 275.0)
    assert finding.message == (
        "effective osmolality 297.0 mOsm/kg is at or above 275 mOsm/kg: this low sodium is not hypotonic "
        "(translocational, from high glucose or mannitol, or hypertonic), and raising sodium does not treat it; "
        "correct the glucose first and judge the sodium corrected for it"
    )


def test_the_not_hypotonic_warning_needs_a_low_sodium_and_an_order_that_raises_it(demo: Formulary) -> None:
    # Na 135 is not hyponatraemia (below 135: Spasovski 2014); glucose 5 % lowers sodium; labs only: no order.
    assert "hyponatraemia-not-hypotonic" not in codes(
        check(demo, sodium="135", glucose="45", agent="nacl-3", volume="250")
    )
    lowering = check(demo, sodium="126", glucose="45", agent="glucose-5", volume="500", duration="60")
    assert "hyponatraemia-not-hypotonic" not in codes(lowering)
    assert "hyponatraemia-not-hypotonic" not in codes(check(demo, sodium="126", glucose="45"))


def test_without_a_glucose_a_note_says_tonicity_was_not_judged(demo: Formulary) -> None:
    result = check(demo, sodium="126", agent="nacl-3", volume="250", duration="30")
    assert (
        "No glucose: whether this low sodium is hypotonic cannot be judged; hypertonic saline treats hypotonic "
        "hyponatraemia only (effective osmolality below 275 mOsm/kg)."
    ) in result.notes


# --- every rate judged: osmoles per kg per minute --------------------------------------------------
# Published boluses (US Joint Trauma System guideline; Brain Trauma Foundation), in 70 kg:
# 3 % 250 mL over 10 min: 250 x 1027 / 1000 / 10 / 70 = 0.367 mOsm/kg/min;
# 23.4 % 30 mL over 10 min: 30 x 8000 / 1000 / 10 / 70 = 0.343;
# 20 % mannitol 1 g/kg over 15 min: 70 g / 182.17 = 384.3 mOsm / 15 / 70 = 0.366.
# Default limits: warn above 0.7 (twice), refuse above 1.4 (four times).

RATE_UNIT = """\
[formulary]
name = "Rate test unit (invented)"
version = "1"

[[agents]]
id = "hyper"
label = "Invented hypertonic fluid"
solute = "mixed"
route = "any-line"
sodium = "500 mmol/L"
osmolarity = "1000 mOsm/L"
"""


@pytest.fixture(scope="module")
def rate_unit(tmp_path_factory: pytest.TempPathFactory) -> Formulary:
    path = tmp_path_factory.mktemp("rate") / "unit.toml"
    path.write_text(RATE_UNIT, encoding="utf-8")
    return load_formulary(path)


@pytest.mark.parametrize(
    ("duration", "expected"),
    [
        # 490 mL x 1000 mOsm/L = 490 mOsm / 70 kg = 7 mOsm/kg, over the duration in minutes.
        ("10.1", None),  # 0.693
        ("10", None),  # 0.7: at the warn limit
        ("9.9", "warn"),  # 0.707
        ("5.1", "warn"),  # 1.373
        ("5", "warn"),  # 1.4: at the refuse limit
        ("4.9", "refuse"),  # 1.429
    ],
)
def test_the_default_osmolar_rate_limits(rate_unit: Formulary, duration: str, expected: str | None) -> None:
    result = check(rate_unit, sodium="140", agent="hyper", volume="490", duration=duration)
    assert codes(result).get("osmolar-rate-high") == expected
    assert result.dose is not None
    assert result.dose.osmolar_rate_mosm_kg_min == pytest.approx(7.0 / float(duration))


def test_the_published_boluses_are_well_inside_the_rate_limits(demo: Formulary) -> None:
    for agent, volume, duration in (("nacl-3", "250", "10"), ("mannitol-20", "350", "15")):
        result = check(demo, sodium="140", agent=agent, volume=volume, duration=duration, line="central")
        assert "osmolar-rate-high" not in codes(result)
        assert result.dose is not None
        assert result.dose.osmolar_rate_mosm_kg_min == pytest.approx(0.367, abs=0.002)


def test_the_osmolar_rate_message(rate_unit: Formulary) -> None:
    finding = only(check(rate_unit, sodium="140", agent="hyper", volume="490", duration="4"), "osmolar-rate-high")
    assert finding.message == (
        "osmolar rate 1.75 mOsm/kg/min is above the default refuse limit of 1.4 mOsm/kg/min for an agent with no "
        "max_rate (published boluses give about 0.35: 3 % 250 mL or 23.4 % 30 mL over 10 min, mannitol 1 g/kg "
        "over 15 min, in 70 kg)"
    )


def test_an_agent_with_a_max_rate_is_judged_by_it_alone(demo: Formulary) -> None:
    # 23.4 % 30 mL over 10 min = 180 mL/h: at its max_rate; osmolar rate 0.343 is not judged for it.
    result = check(demo, sodium="140", agent="nacl-23.4", volume="30", duration="10", line="central")
    assert codes(result) == {}


@pytest.mark.parametrize(
    ("agent", "note"),
    [
        ("nacl-3", "No duration given: the rate is not checked against the default osmolar rate limits "
         "(warn above 0.7, refuse above 1.4 mOsm/kg/min)."),
        ("nacl-23.4", "No duration given: the rate is not checked against this agent's maximum of 180 mL/h."),
        ("nacl-0.9", "No duration given: the rate is not checked."),
    ],
)  # fmt: skip
def test_without_a_duration_every_agent_notes_the_rate_unchecked(demo: Formulary, agent: str, note: str) -> None:
    assert note in check(demo, sodium="140", agent=agent, volume="30", line="central").notes


def test_an_isotonic_agent_notes_that_its_rate_is_not_judged(demo: Formulary) -> None:
    # 0.9 % sodium chloride, 308 mOsm/L (label): not above 400 mOsm/L, no max_rate.
    result = check(demo, sodium="140", agent="nacl-0.9", volume="1000", duration="10")
    assert (
        "The rate is not judged: this agent sets no max_rate, and at 308 mOsm/L it is not above the 400 mOsm/L "
        "from which the default osmolar rate limits apply."
    ) in result.notes


# --- weight plausible for age ------------------------------------------------------------------------
# science/ranges.WEIGHT_FOR_AGE: adults 25 kg (common practice) to 400 kg; children from growth charts
# (WHO 0-5 y, CDC 2000 2-20 y, 3rd and 97th centiles, from memory): at 1 year 3 to 30 kg.


@pytest.mark.parametrize(
    ("weight", "age", "expected"),
    [
        ("25", "58", None),  # at the adult minimum
        ("24.9", "58", "weight-low-for-age"),
        ("9.5", "58", "weight-low-for-age"),  # the 95 kg typed 9.5
        ("30", "1", None),  # at the 1-year maximum (2.5 x the boys' 97th centile, 12 kg)
        ("30.1", "1", "weight-high-for-age"),
        ("3", "1", None),  # at the 1-year minimum
        ("2.9", "1", "weight-low-for-age"),
        ("0.4", "0", None),  # an extremely premature newborn is never refused
        ("35", "0", "weight-high-for-age"),  # a 3.5 kg newborn typed 35
        ("2.25", "0.75", None),  # 9 months: halfway between 1.5 and 3.0 kg
        ("2.2", "0.75", "weight-low-for-age"),
    ],
)
def test_a_weight_that_cannot_be_real_at_the_age_is_refused(
    demo: Formulary, weight: str, age: str, expected: str | None
) -> None:
    result = check(demo, weight=weight, age=age, sodium="140")
    found = [code for code in codes(result) if code.startswith("weight")]
    assert found == ([expected] if expected else [])
    if expected:
        assert result.status == "refuse"


def test_the_weight_message_names_the_weight_the_age_and_the_source(demo: Formulary) -> None:
    finding = only(check(demo, weight="9.5", age="58", sodium="140"), "weight-low-for-age")
    assert (finding.value, finding.limit, finding.unit) == (9.5, 25.0, "kg")
    assert finding.message == (
        "weight 9.5 kg is below 25 kg, the lightest that can be real at this age (age 58 y; growth charts (WHO "
        "0-5 y, CDC 2000 2-20 y; 3rd and 97th centiles, from memory) and an adult minimum of 25 kg (common "
        "practice)): check the weight for a slipped decimal point or a value in the wrong box"
    )


# --- body size ---------------------------------------------------------------------------------------


def test_bmi_is_weight_over_height_squared(demo: Formulary) -> None:
    # 70 kg, 175 cm: 70 / 1.75^2 = 22.86 kg/m^2 (WHO body mass index).
    assert check(demo, sodium="140", height="175").patient.bmi_kg_m2 == pytest.approx(22.857, abs=1e-3)
    assert check(demo, sodium="140").patient.bmi_kg_m2 is None


@pytest.mark.parametrize(
    ("weight", "fires"),
    [
        # 160 cm: BMI 30 at 30 x 1.6^2 = 76.8 kg (WHO: obesity from 30).
        ("76.8", True),
        ("76.7", False),  # 29.96
        ("150", True),  # 58.6
    ],
)
def test_obesity_on_the_fraction_method_is_warned_for_a_sodium_order(demo: Formulary, weight: str, fires: bool) -> None:
    fields = {"weight": weight, "sex": "female", "height": "160", "sodium": "120", "agent": "nacl-3"}
    result = check(demo, **fields, target_rise="6", duration="60")
    assert ("body-water-obesity" in codes(result)) is fires


def test_the_obesity_warning_shows_the_watson_figure_and_the_change_it_gives(demo: Formulary) -> None:
    # Woman 45 y, 150 kg, 160 cm, Na 120, 3 % (513 mmol/L, label) for +6: fraction 0.5 x 150 = 75 L;
    # V = 6 x 75 / (513 - 120 - 6) = 1.1628 L. Watson (1980): -2.097 + 0.1069 x 160 + 0.2466 x 150 = 52.0 L;
    # with it 120 + 1.1628 x 393 / (52.0 + 1.1628) = +8.6 mmol/L.
    fields = {"weight": "150", "sex": "female", "height": "160", "sodium": "120", "agent": "nacl-3"}
    finding = only(check(demo, **fields, target_rise="6", duration="60"), "body-water-obesity")
    assert (finding.severity, finding.value, finding.limit) == ("warn", pytest.approx(58.59, abs=0.01), 30.0)
    assert finding.message == (
        "body mass index 58.6 kg/m^2 is 30 or more: the fraction of weight overstates body water in obesity, so "
        "the real sodium change may be larger than projected; body water 75.0 L by the fraction, 52.0 L by the "
        "Watson formula, with which this order changes sodium by +8.6 mmol/L instead of +6.0; consider "
        "--tbw-method watson"
    )


def test_obesity_with_no_sodium_order_is_a_note(demo: Formulary) -> None:
    result = check(demo, weight="150", sex="female", height="160", sodium="140")
    assert codes(result) == {}
    assert (
        "Body mass index 58.6 kg/m^2: the fraction of weight (75.0 L) overstates body water in obesity; "
        "the Watson formula gives 52.0 L."
    ) in result.notes


def test_on_the_watson_method_obesity_is_not_warned(demo: Formulary) -> None:
    fields = {"weight": "150", "sex": "female", "height": "160", "sodium": "120", "agent": "nacl-3"}
    result = check(demo, **fields, target_rise="6", duration="60", tbw_method="watson")
    assert "body-water-obesity" not in codes(result)


DOSE_WEIGHT_UNIT = """\
[formulary]
name = "Dose weight test unit (invented)"
version = "1"

[[agents]]
id = "mannitol-20"
label = "Mannitol 20 %"
solute = "mannitol"
concentration = "20% w/v"
route = "any-line"
dose_weight = "{basis}"
"""


def _unit(tmp_path: Path, basis: str) -> Formulary:
    path = tmp_path / f"{basis}.toml"
    path.write_text(DOSE_WEIGHT_UNIT.format(basis=basis), encoding="utf-8")
    return load_formulary(path)


@pytest.mark.parametrize(
    ("basis", "dosing_kg"),
    [
        ("actual", 100.0),
        # Devine (1974, as restated in pharmacy references, from memory): 50 + 2.3 x (180 / 2.54 - 60) = 74.99 kg.
        ("ideal", 74.992),
        # Adjusted (common practice): 74.99 + 0.4 x (100 - 74.99) = 84.995 kg.
        ("adjusted", 84.995),
    ],
)
def test_a_per_kg_dose_uses_the_agents_dose_weight(tmp_path: Path, basis: str, dosing_kg: float) -> None:
    result = check(_unit(tmp_path, basis), weight="100", height="180", sodium="140", agent="mannitol-20", dose="1g/kg")
    assert result.dose is not None
    assert result.dose.dosing_weight_kg == pytest.approx(dosing_kg, abs=1e-3)
    assert result.dose.solute_g == pytest.approx(dosing_kg, abs=1e-3)  # 1 g/kg
    assert result.dose.dose_weight == basis


def test_a_dose_on_ideal_weight_needs_a_height(tmp_path: Path) -> None:
    with pytest.raises(InputError) as caught:
        check(_unit(tmp_path, "ideal"), weight="100", sodium="140", agent="mannitol-20", dose="1g/kg")
    assert str(caught.value) == (
        "height: is required: mannitol-20 is dosed on ideal body weight in this formulary (accepted: a height in cm)"
    )


# --- children: adults-only agents, hypotonic fluids with raised ICP ----------------------------------


@pytest.mark.parametrize(("age", "expected"), [("17", "refuse"), ("18", None)])
def test_an_adults_only_agent_is_refused_for_a_child(demo: Formulary, age: str, expected: str | None) -> None:
    # The demo marks 23.4 % adults only (demo value); the adult age setting is 18.
    result = check(demo, age=age, sodium="140", agent="nacl-23.4", volume="30", duration="15", line="central")
    assert codes(result).get("adult-only-agent") == expected


def test_the_adults_only_message(demo: Formulary) -> None:
    result = check(demo, age="12", weight="40", sodium="140", agent="nacl-23.4", volume="20", duration="15")
    assert only(result, "adult-only-agent").message == (
        "this agent is for adults only in this formulary, and the patient is 12 years old"
    )


def test_a_hypotonic_fluid_with_raised_icp_is_warned(demo: Formulary) -> None:
    # Glucose 5 % lowers sodium: 140 x 42 / 42.5 = 138.35, a change of -1.6 mmol/L.
    result = check(demo, sodium="140", agent="glucose-5", volume="500", duration="60", raised_icp="yes")
    assert only(result, "hypotonic-raised-icp").message == (
        "this order lowers sodium (projected -1.6 mmol/L): a hypotonic fluid draws water into the brain and raises "
        "intracranial pressure, which is raised; give isotonic or hypertonic fluid instead"
    )
    assert "hypotonic-raised-icp" not in codes(
        check(demo, sodium="140", agent="glucose-5", volume="500", duration="60")
    )
    saline = check(demo, sodium="140", agent="nacl-3", volume="250", duration="30", raised_icp="yes")
    assert "hypotonic-raised-icp" not in codes(saline)


def test_an_infant_has_more_body_water(demo: Formulary) -> None:
    # Below 1 year the infant fraction 0.7 (Friis-Hansen 1961, from memory): 8 kg -> 5.6 L; at 1 year 0.6 -> 4.8 L.
    assert check(demo, weight="8", age="0.5", sodium="140").patient.total_body_water_l == pytest.approx(5.6)
    assert check(demo, weight="8", age="1", sodium="140").patient.total_body_water_l == pytest.approx(4.8)


# --- the rise budget and the high-risk note -----------------------------------------------------------


def test_the_rise_budget_shows_the_share_of_the_24h_limit_and_the_goal(demo: Formulary) -> None:
    # Na 120, 250 mL of 3 % (513 mmol/L): 0.25 x (513 - 120) / 42.25 = +2.33 mmol/L, of 8 (warn) and 10 (refuse;
    # Verbalis 2013); goal 4-8 mmol/L (Verbalis 2013).
    budget = check(demo, sodium="120", agent="nacl-3", volume="250", duration="30").sodium_rise_budget
    assert budget is not None
    assert budget.rise_mmol_l == pytest.approx(2.3254, abs=1e-4)
    assert (budget.warn_mmol_l, budget.refuse_mmol_l, budget.high_risk) == (8.0, 10.0, False)
    assert (budget.target_low_mmol_l, budget.target_high_mmol_l) == (4.0, 8.0)


def test_at_high_risk_the_budget_narrows_the_goal_to_4_to_6(demo: Formulary) -> None:
    # Potassium 3.0 < 3.5: high risk of osmotic demyelination (Verbalis 2013): refuse above 8, goal 4-6.
    result = check(demo, sodium="120", potassium="3.0", agent="nacl-3", volume="250", duration="30")
    budget = result.sodium_rise_budget
    assert budget is not None
    assert (budget.refuse_mmol_l, budget.high_risk, budget.target_high_mmol_l) == (8.0, True, 6.0)


def test_no_budget_where_the_rise_limits_do_not_apply(demo: Formulary) -> None:
    assert check(demo, sodium="136", agent="nacl-3", volume="250", duration="30").sodium_rise_budget is None
    assert check(demo, sodium="120").sodium_rise_budget is None


def test_the_hypokalaemia_note_where_the_rise_limits_apply(demo: Formulary) -> None:
    result = check(demo, sodium="120", potassium="3.0", agent="nacl-3", volume="250", duration="30")
    assert (
        "High risk of osmotic demyelination (hypokalaemia): the rise is refused above 8 mmol/L in 24 h. Alcohol use, "
        "malnutrition and liver disease raise the risk too: judge them at the bedside."
    ) in result.notes
    assert POTASSIUM_NOTE in result.notes


POTASSIUM_NOTE = (
    "Potassium given to correct the hypokalaemia raises serum sodium too (Edelman: serum sodium follows "
    "exchangeable sodium plus potassium over total body water): count it in the rise."
)


def test_the_hypokalaemia_note_no_longer_contradicts_the_rise_limits(demo: Formulary) -> None:
    # Na 136: the rise limits do not apply (from below 135 only), so the high-risk limit does not either.
    result = check(demo, sodium="136", potassium="3.2", agent="nacl-3", volume="500", duration="60")
    assert not any(note.startswith("High risk of osmotic demyelination (hypokalaemia): the rise is refused")
                   for note in result.notes)  # fmt: skip
    assert (
        "High risk of osmotic demyelination (hypokalaemia), but the high-risk limit (8 mmol/L in 24 h) applies only "
        "where the 24 h rise limits do, from a starting sodium below 135 mmol/L; from 136 mmol/L this order is "
        "judged by the sodium ceilings."
    ) in result.notes
    assert POTASSIUM_NOTE in result.notes


def test_a_central_only_agent_with_no_line_gets_a_note(demo: Formulary) -> None:
    result = check(demo, sodium="150", agent="nacl-23.4", volume="30", duration="15")
    assert (
        "No line stated: nacl-23.4 is for a central line only; an order for it must name the line (verification "
        "holds it until it does)."
    ) in result.notes
