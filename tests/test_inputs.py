"""Reading what a user typed: units, conversions, and the exact message for each bad input."""

from __future__ import annotations

import pydantic
import pytest

from osmodose.case.inputs import parse_check_request
from osmodose.check.run import run_check
from osmodose.errors import InputError
from osmodose.formulary import Formulary

MAN = {"weight": "70", "age": "40", "sex": "male", "sodium": "140"}


def request(**fields: str):
    return parse_check_request({**MAN, **{k.replace("_", "-"): v for k, v in fields.items()}})


def message_of(formulary: Formulary | None = None, **fields: str) -> str:
    with pytest.raises(InputError) as caught:
        typed = {**MAN, **{k.replace("_", "-"): v for k, v in fields.items() if v is not None}}
        for key in [k for k, v in fields.items() if v is None]:
            typed.pop(key.replace("_", "-"), None)
        parsed = parse_check_request(typed)
        if formulary is not None:
            run_check(parsed, formulary)
    return str(caught.value)


# --- conversions -------------------------------------------------------------------------------


def test_weight_in_pounds() -> None:
    # 176 lb x 0.45359237 kg/lb (NIST SP 811) = 79.832 kg.
    assert request(weight="176lb").patient.weight_kg == pytest.approx(79.83225712)


def test_glucose_in_mg_per_dl_uses_the_molar_mass() -> None:
    # 126 mg/dL / 180.16 g/mol x 10 = 6.994 mmol/L (126 / 18 = 7.0 in the conventional formula).
    assert request(glucose="126mg/dL").labs.glucose_mmol_l == pytest.approx(1260 / 180.16)


def test_bun_in_mg_per_dl_becomes_urea_in_mmol_per_l() -> None:
    # BUN is reported as mg of nitrogen, two N per urea: 14 mg/dL / 28.01 g/mol x 10 = 4.998 mmol/L,
    # the same as BUN x 0.357 (conventional factor) = 4.998 and BUN / 2.8 = 5.0.
    urea = request(bun="14").labs.urea_mmol_l
    assert urea == pytest.approx(140 / 28.01)
    assert urea == pytest.approx(14 * 0.357, abs=0.01)


def test_ethanol_in_mg_per_dl_uses_the_molar_mass() -> None:
    # 92 mg/dL / 46.07 g/mol x 10 = 19.97 mmol/L (92 / 4.6 = 20, Nguyen MK et al. Front Med 2020).
    assert request(ethanol="92 mg/dL").labs.ethanol_mmol_l == pytest.approx(920 / 46.07)


def test_osmolality_in_mmol_per_kg_is_the_same_figure() -> None:
    assert request(osmolality="300 mmol/kg").labs.osmolality_mosm_kg == 300.0


def test_sodium_in_meq_per_l() -> None:
    assert request(sodium="140 mEq/L").labs.sodium_mmol_l == pytest.approx(140.0)


def test_age_in_months() -> None:
    assert request(age="6 months").patient.age_years == pytest.approx(0.5)


def test_duration_in_hours_becomes_minutes() -> None:
    dose = request(agent="nacl-3", volume="250", duration="2h").dose
    assert dose is not None
    assert dose.duration_min == pytest.approx(120.0)


@pytest.mark.parametrize(
    ("text", "amount", "unit", "per_kg"),
    [
        ("1g/kg", 1.0, "g", True),
        ("5mL/kg", 5.0, "mL", True),
        ("2 mmol/kg", 2.0, "mmol", True),
        ("2 mEq/kg", 2.0, "mmol", True),
        ("50g", 50.0, "g", False),
        ("120mmol", 120.0, "mmol", False),
        ("250 mL", 250.0, "mL", False),
        ("0.25 L", 250.0, "mL", False),
        ("500 mg/kg", 0.5, "g", True),
    ],
)
def test_dose_forms(text: str, amount: float, unit: str, per_kg: bool) -> None:
    dose = request(agent="nacl-3", dose=text).dose
    assert dose is not None
    assert (dose.mode, dose.unit, dose.per_kg) == ("dose", unit, per_kg)
    assert dose.amount == pytest.approx(amount)


def test_the_request_is_frozen_and_keeps_what_was_typed() -> None:
    parsed = request(weight="176lb")
    assert parsed.entered["weight"] == "176lb"
    with pytest.raises(pydantic.ValidationError):
        parsed.patient.weight_kg = 80.0  # type: ignore[misc]


# --- bad input, word for word ------------------------------------------------------------------

_DOSE_ACCEPTED = "g, mL, mmol or mOsm, absolute or per kg (1 g/kg, 5 mL/kg, 50 g, 120 mmol)"
_ONE_MODE = "exactly one of dose, volume, target-rise or target-sodium"


@pytest.mark.parametrize(
    ("fields", "message"),
    [
        ({"sodium": "1400"}, "sodium: 1400 is outside the plausible range (accepted: 90 to 200 mmol/L)"),
        ({"weight": "-4"}, "weight: -4 is outside the plausible range (accepted: 0.3 to 400 kg)"),
        ({"weight": "-4 kg"}, "weight: -4 kg is outside the plausible range (accepted: 0.3 to 400 kg)"),
        ({"weight": "30 mL"}, "weight: 30 mL is in the wrong unit (accepted: kg)"),
        ({"weight": None}, "weight: is required"),
        ({"age": "130"}, "age: 130 is outside the plausible range (accepted: 0 to 120 years)"),
        ({"sex": "m"}, "sex: m is not a sex osmodose knows (accepted: female or male)"),
        ({"height": "1.8"}, "height: 1.8 is outside the plausible range (accepted: 25 to 250 cm)"),
        ({"potassium": "45"}, "potassium: 45 is outside the plausible range (accepted: 1 to 10 mmol/L)"),
        ({"glucose": "5 kg"}, "glucose: 5 kg is in the wrong unit (accepted: mmol/L or mg/dL)"),
        ({"osmolality": "3000"}, "osmolality: 3000 is outside the plausible range (accepted: 200 to 450 mOsm/kg)"),
        ({"urea": "5", "bun": "14"}, "bun: 14 cannot be given together with urea (accepted: urea or bun, not both)"),
        ({"line": "arterial"}, "line: arterial is not a line osmodose knows (accepted: central or peripheral)"),
        (
            {"tbw_method": "guess"},
            "tbw-method: guess is not a method osmodose knows (accepted: fraction or watson)",
        ),
        (
            {"agent": "nacl-3", "dose": "1g/kg", "volume": "100"},
            f"volume: 100 cannot be given together with dose (accepted: {_ONE_MODE})",
        ),
        (
            {"agent": "nacl-3", "volume": "100", "target_rise": "5"},
            f"target-rise: 5 cannot be given together with volume (accepted: {_ONE_MODE})",
        ),
        ({"agent": "nacl-3"}, f"agent: nacl-3 needs a dose (accepted: {_ONE_MODE})"),
        ({"dose": "1g/kg"}, "dose: 1g/kg needs an agent (accepted: --agent ID)"),
        ({"agent": "nacl-3", "dose": "5"}, f"dose: 5 has no unit (accepted: {_DOSE_ACCEPTED})"),
        ({"agent": "nacl-3", "dose": "+5"}, f"dose: +5 has no unit (accepted: {_DOSE_ACCEPTED})"),
        ({"agent": "nacl-3", "dose": "5e1"}, f"dose: 5e1 has no unit (accepted: {_DOSE_ACCEPTED})"),
        ({"agent": "nacl-3", "dose": "-1 g/kg"}, f"dose: -1 g/kg is not above zero (accepted: {_DOSE_ACCEPTED})"),
        (
            {"agent": "nacl-3", "volume": "50 L"},
            "volume: 50 L is outside the plausible range (accepted: 0.1 to 5000 mL)",
        ),
        (
            {"agent": "nacl-3", "target_rise": "0"},
            "target-rise: 0 is zero (accepted: a change from -30 to 30 mmol/L, not 0)",
        ),
        (
            {"agent": "nacl-3", "volume": "250", "duration": "0"},
            "duration: 0 is outside the plausible range (accepted: 1 to 10080 min)",
        ),
    ],
)
def test_bad_input_gives_the_exact_message(fields: dict[str, str | None], message: str) -> None:
    assert message_of(**fields) == message


def test_wrong_unit_dose_message() -> None:
    assert message_of(agent="nacl-3", dose="5 h") == (
        "dose: 5 h is in the wrong unit (accepted: g or mL or mmol or mOsm or g/kg or mL/kg or mmol/kg or mOsm/kg)"
    )


# --- needs the formulary -----------------------------------------------------------------------


def test_an_unknown_agent_lists_the_known_ids(demo: Formulary) -> None:
    known = ", ".join(a.id for a in demo.agents)
    assert message_of(demo, agent="nacl-30", volume="100") == (
        f"agent: nacl-30 is not an agent of this formulary (accepted: one of: {known})"
    )
    assert "nacl-3, nacl-7.5, nacl-23.4, mannitol-20" in known


def test_an_unreachable_target_rise(demo: Formulary) -> None:
    # 0.9 % saline (labelled 154 mmol/L) at Na 140 can raise sodium by less than 154 - 140 = 14.
    assert message_of(demo, agent="nacl-0.9", target_rise="20") == (
        "target-rise: 20 cannot be reached with nacl-0.9: its sodium + potassium is 154 mmol/L "
        "against serum 140 mmol/L (accepted: a change toward the infusate's sodium, smaller than the difference)"
    )


def test_a_rise_asked_of_a_sodium_free_fluid_is_unreachable(demo: Formulary) -> None:
    assert message_of(demo, agent="glucose-5", target_rise="5") == (
        "target-rise: 5 cannot be reached with glucose-5: its sodium + potassium is 0 mmol/L "
        "against serum 140 mmol/L (accepted: a change toward the infusate's sodium, smaller than the difference)"
    )


def test_watson_without_height(demo: Formulary) -> None:
    assert message_of(demo, tbw_method="watson") == (
        "height: is required for the Watson formula (accepted: a height in cm, or tbw-method fraction)"
    )


def test_a_target_rise_for_mannitol(demo: Formulary) -> None:
    assert message_of(demo, agent="mannitol-20", target_rise="5") == (
        "target-rise: 5 cannot be used with mannitol-20: osmodose projects no sodium for it (accepted: dose or volume)"
    )


def test_millimoles_of_sodium_from_mannitol(demo: Formulary) -> None:
    assert message_of(demo, agent="mannitol-20", dose="2mmol/kg") == (
        "dose: 2mmol/kg is in mmol of sodium, but mannitol-20 has no sodium (accepted: g, mL or mOsm)"
    )


def test_grams_of_a_mixed_fluid(demo: Formulary) -> None:
    assert message_of(demo, agent="lactated-ringers", dose="10g") == (
        "dose: 10g is in grams, but lactated-ringers is a mixed fluid (accepted: mL, mmol or mOsm)"
    )


def test_a_dose_that_comes_to_an_implausible_volume(demo: Formulary) -> None:
    # 100 g of 0.9 % NaCl (9 g/L) is 11111 mL, beyond the 5000 mL order-size range.
    assert message_of(demo, agent="nacl-0.9", dose="100g") == (
        "dose: 100g comes to 11111 mL of nacl-0.9, outside the plausible range (accepted: 0.1 to 5000 mL)"
    )


@pytest.mark.parametrize(
    ("bun", "message"),
    [
        # A bare BUN is mg/dL, so its range is said in mg/dL: the urea range 0.5-100 mmol/L
        # x 28.01 g/mol (N2) = 1.4-280.1 mg/dL; the old message gave mmol/L for a figure typed in mg/dL.
        ("300", "bun: 300 is outside the plausible range (accepted: 1.4 to 280.1 mg/dL)"),
        ("1", "bun: 1 is outside the plausible range (accepted: 1.4 to 280.1 mg/dL)"),
        ("101 mmol/L", "bun: 101 mmol/L is outside the plausible range (accepted: 1.4 to 280.1 mg/dL)"),
    ],
)
def test_an_implausible_bun_is_described_in_mg_per_dl(bun: str, message: str) -> None:
    assert message_of(bun=bun) == message


def test_bun_at_the_ends_of_its_range_is_read() -> None:
    assert request(bun="280").labs.urea_mmol_l == pytest.approx(2800 / 28.01)
    assert request(bun="100 mmol/L").labs.urea_mmol_l == pytest.approx(100.0)
