"""UCUM unit codes: read into the one registry, annotations ignored, case kept, same quantities as before.

Check values are UCUM 2.2's own definitions (ucum-essence.xml, the Regenstrief Institute's
published table) and the chemistry constants already used by the unit tests.
"""

from __future__ import annotations

import subprocess
import sys

import pytest
from hypothesis import given
from hypothesis import strategies as st

from osmodose.case.fields import conversion, read
from osmodose.errors import InputError
from osmodose.science.ucum import NOT_READ, NOT_UCUM, UcumError, ucum_quantity, ucum_unit
from osmodose.science.units import Q_, parse_quantity
from tests.conftest import REPO_ROOT

# (UCUM code, a spelling osmodose read before UCUM, the field it is typed into, a plausible value): the
# codes the issue lists, as laboratory systems and FHIR write them.
SAME_UNIT = [
    ("mmol/L", "mmol/L", "sodium", 140),
    ("meq/L", "mEq/L", "sodium", 140),
    ("mg/dL", "mg/dL", "glucose", 126),
    ("g/dL", "g/dL", "glucose", 0.126),
    ("mosm/kg", "mOsm/kg", "osmolality", 290),
    ("mosm/kg{H2O}", "mOsm/kg", "osmolality", 290),
    ("mmol/kg{H2O}", "mmol/kg", "osmolality", 290),
    ("kg", "kg", "weight", 70),
    ("g", "g", "weight", 70000),
    ("[lb_av]", "lb", "weight", 176),
    ("cm", "cm", "height", 170),
    ("m", "m", "height", 1.7),
    ("[in_i]", "inch", "height", 70),
    ("a", "year", "age", 45),
    ("h", "h", "duration", 2),
    ("min", "min", "duration", 20),
    ("mL", "mL", "volume", 250),
    ("L", "L", "volume", 0.25),
    ("mL/h", "mL/h", "rate", 100),
    ("mm[Hg]", "mmHg", "map", 80),
]


@pytest.mark.parametrize(("code", "spelling", "field", "value"), SAME_UNIT)
def test_a_ucum_code_reads_as_the_spelling_osmodose_read_before(
    code: str, spelling: str, field: str, value: float
) -> None:
    assert read(field, f"{value} {code}") == pytest.approx(read(field, f"{value} {spelling}"), rel=1e-12)


@pytest.mark.parametrize(
    ("code", "unit", "value"),
    [
        # UCUM 2.2 ucum-essence.xml: [lb_av] = 7000 [gr], [gr] = 64.79891 mg, so 453.59237 g.
        ("[lb_av]", "g", 453.59237),
        # [oz_av] = 1/16 [lb_av]; [stone_av] = 14 [lb_av].
        ("[oz_av]", "g", 453.59237 / 16),
        ("[stone_av]", "kg", 14 * 0.45359237),
        # [in_i] = 2.54 cm; [ft_i] = 12 [in_i].
        ("[in_i]", "cm", 2.54),
        ("[ft_i]", "cm", 30.48),
        # a = a_j, the Julian year = 365.25 d; mo = mo_j = a_j / 12; wk = 7 d.
        ("a", "d", 365.25),
        ("mo", "d", 365.25 / 12),
        ("wk", "d", 7.0),
        # m[Hg] = 133.3220 kPa in ucum-essence.xml (pint's conventional 133.322387 kPa agrees to 3e-6).
        ("mm[Hg]", "kPa", 0.1333220),
        # eq and osm are each 1 mol in UCUM: osmodose reads them as mmol of a monovalent ion and as mOsm.
        ("meq/L", "mmol/L", 1.0),
        ("mosm/kg", "mOsm/kg", 1.0),
        # Factors: mL/(24.h) is one 24th of mL/h.
        ("mL/(24.h)", "mL/h", 1 / 24),
        ("/min", "1/s", 1 / 60),
        ("kg/m2", "kg/m**2", 1.0),
    ],
)
def test_ucum_atoms_have_the_values_ucum_defines(code: str, unit: str, value: float) -> None:
    assert ucum_unit(code).m_as(unit) == pytest.approx(value, rel=1e-5)


@pytest.mark.parametrize("annotation", ["{H2O}", "{total}", "{serum}", "{a.b/c}"])
def test_an_annotation_in_braces_carries_no_unit(annotation: str) -> None:
    assert ucum_unit(f"mosm/kg{annotation}") == ucum_unit("mosm/kg")
    assert read("osmolality", f"290 mOsm/kg{annotation}") == 290.0


@pytest.mark.parametrize(
    ("code", "problem"),
    [
        # UCUM codes are case-sensitive: the milliosmole is mosm, the milliequivalent meq.
        ("mOsm/kg", NOT_UCUM),
        ("mEq/L", NOT_UCUM),
        ("MMOL/L", NOT_UCUM),  # UCUM's case-insensitive form, which FHIR does not use
        ("mmol / L", NOT_UCUM),
        ("", NOT_UCUM),
        ("kg" * 40, NOT_UCUM),
        # Valid UCUM, not a unit osmodose reads.
        ("[degF]", NOT_READ),
        ("10*3/uL", NOT_READ),
        ("m99", NOT_READ),
    ],
)
def test_text_that_is_not_a_ucum_code_osmodose_reads_is_refused(code: str, problem: str) -> None:
    with pytest.raises(UcumError) as caught:
        ucum_unit(code)
    assert caught.value.problem == problem


@pytest.mark.parametrize(
    ("typed", "message"),
    [
        # Neither a spelling nor a UCUM code: the words of before, unchanged.
        ("140 MMOL/L", "sodium: 140 MMOL/L is not a quantity osmodose can read (accepted: mmol/L)"),
        ("140 mmol / X", "sodium: 140 mmol / X is not a quantity osmodose can read (accepted: mmol/L)"),
        (
            "1 500 mmol/L",
            "sodium: 1 500 mmol/L has more than one number (accepted: one number and a unit, e.g. 7.5 mmol/L)",
        ),
        # Read as UCUM, in the wrong dimension.
        ("140 mosm/kg", "sodium: 140 mosm/kg is in the wrong unit (accepted: mmol/L)"),
        ("140 [lb_av]", "sodium: 140 [lb_av] is in the wrong unit (accepted: mmol/L)"),
    ],
)
def test_typed_text_that_cannot_be_used_keeps_its_message(typed: str, message: str) -> None:
    with pytest.raises(InputError) as caught:
        read("sodium", typed)
    assert str(caught.value) == message


def test_a_column_unit_may_be_a_ucum_code() -> None:
    # The audit converts a whole column by the unit in its header: the same factor as one typed value.
    assert conversion("sodium", "meq/L", "mmol/L") == 1.0
    assert conversion("osmolality", "mosm/kg{H2O}", "mOsm/kg") == 1.0
    assert conversion("weight", "[lb_av]", "kg") == pytest.approx(0.45359237, rel=1e-12)


def test_a_file_value_and_its_code_make_one_quantity() -> None:
    # The spec's body weight example: 185 [lb_av] (HL7 FHIR R4 observation-example.json) = 83.91 kg.
    assert ucum_quantity(185, "[lb_av]").m_as("kg") == pytest.approx(185 * 0.45359237, rel=1e-12)


@given(
    value=st.floats(min_value=0.001, max_value=1e6, allow_nan=False, allow_infinity=False),
    pair=st.sampled_from(SAME_UNIT),
    annotation=st.sampled_from(["", "{H2O}", "{x}"]),
)
def test_ucum_strings_round_trip_to_the_quantities_of_todays_spellings(
    value: float, pair: tuple[str, str, str, float], annotation: str
) -> None:
    code, spelling, _, _ = pair
    text = f"{value!r} {code}" + ("" if "{" in code else annotation)
    ucum = parse_quantity("x", text, spelling, (spelling,))
    before = parse_quantity("x", f"{value!r} {spelling}", spelling, (spelling,))
    assert ucum.m_as(spelling) == pytest.approx(before.m_as(spelling), rel=1e-12)
    assert Q_(ucum.m_as(spelling), spelling).m_as(ucum.units) == pytest.approx(ucum.magnitude, rel=1e-12)


def test_a_check_with_todays_spellings_never_loads_the_ucum_library() -> None:
    # Start-up is timed: the UCUM grammar (ucumvert, lark) loads only for text that needs it.
    code = (
        "import sys\n"
        "from osmodose.cli.main import main\n"
        "main(['check', '--weight', '70', '--age', '45', '--sex', 'male', '--sodium', '140 mEq/L', '--json'])\n"
        "loaded = [m for m in ('ucumvert', 'lark', 'fhir') if m in sys.modules]\n"
        "sys.exit(1 if loaded else 0)\n"
    )
    done = subprocess.run([sys.executable, "-c", code], cwd=REPO_ROOT, capture_output=True, text=True, check=False)
    assert done.returncode == 0, done.stderr
