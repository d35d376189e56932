"""What a check is asked for: validated, frozen, in canonical units.

Front ends (command line, app, verify, course) hand the text a user typed to
`parse_check_request`; it applies the field's default unit, converts lab
units with the molar masses and rejects implausible values, so every front end
reads input the same way.  The models keep the text as entered beside the
normalised value, for records.
"""

from __future__ import annotations

from typing import Literal

from pydantic import BaseModel, ConfigDict, Field

from osmodose.errors import InputError
from osmodose.science.chemistry import molar_mass
from osmodose.science.ranges import check_plausible
from osmodose.science.units import Q_, Quantity, is_bare_number, is_per_mass, parse_quantity, ureg

# No use_attribute_docstrings: nothing reads these fields' descriptions, and pydantic extracting them
# from the source costs `osmodose check` about 10 ms of start-up (the docstrings stay for readers).
_FROZEN = ConfigDict(frozen=True)

Sex = Literal["female", "male"]
Line = Literal["central", "peripheral"]
TbwMethod = Literal["fraction", "watson"]
DoseMode = Literal["dose", "volume", "target-rise"]
DoseUnit = Literal["g", "mL", "mmol", "mOsm", "mmol/L"]


class Patient(BaseModel):
    """The patient, in kg, years and cm."""

    model_config = _FROZEN

    weight_kg: float
    """Actual body weight."""
    age_years: float
    """Age in years (fractions allowed for infants)."""
    sex: Sex
    """Sex used for the total-body-water fractions and the Watson formula."""
    height_cm: float | None = None
    """Height, needed for the Watson formula only."""


class Labs(BaseModel):
    """Serum labs in SI units (mmol/L; osmolality mOsm/kg)."""

    model_config = _FROZEN

    sodium_mmol_l: float
    """Serum sodium."""
    potassium_mmol_l: float | None = None
    """Serum potassium."""
    glucose_mmol_l: float | None = None
    """Serum glucose."""
    urea_mmol_l: float | None = None
    """Serum urea (from urea or from BUN)."""
    ethanol_mmol_l: float | None = None
    """Serum ethanol."""
    osmolality_mosm_kg: float | None = None
    """Measured serum osmolality."""


class DoseRequest(BaseModel):
    """How much of which agent: a dose, a volume or a target sodium change."""

    model_config = _FROZEN

    agent_id: str
    """Id of the agent in the formulary."""
    mode: DoseMode
    """Which of --dose, --volume or --target-rise was given."""
    amount: float
    """The amount in `unit`."""
    unit: DoseUnit
    """g of solute, mL, mmol of sodium, mOsm, or mmol/L of sodium change."""
    per_kg: bool = False
    """Whether `amount` is per kg of body weight."""
    duration_min: float | None = None
    """Infusion duration, for the rate."""
    text: str = ""
    """The dose as the user wrote it."""


class CheckRequest(BaseModel):
    """Everything one check needs besides the formulary."""

    model_config = _FROZEN

    patient: Patient
    labs: Labs
    dose: DoseRequest | None = None
    line: Line | None = None
    """The line the order goes through; no line, no line finding."""
    tbw_method: TbwMethod | None = None
    """Total-body-water method; None takes the formulary's default."""
    entered: dict[str, str] = Field(default_factory=dict)
    """Each field as the user typed it."""


def _concentration(field: str, raw: object, substance: str, default_unit: str = "mmol/L") -> float:
    """A lab concentration in mmol/L, from mmol/L, mEq/L or a mass unit (mg/dL)."""
    quantity = parse_quantity(field, raw, default_unit, ("mmol/L", "mg/dL"))
    if quantity.check("[mass]/[volume]"):
        quantity = quantity / molar_mass(substance)
    return float(quantity.m_as("mmol/L"))


def _plain(field: str, raw: object, unit: str) -> float:
    return float(parse_quantity(field, raw, unit).m_as(unit))


def parse_check_request(
    fields: dict[str, object],
    dose_mode: DoseMode | None = None,
) -> CheckRequest:
    """Build a CheckRequest from typed text; raises InputError on the first bad field.

    Keys of `fields`: weight, age, sex, height, sodium, potassium, glucose, urea,
    bun, ethanol, osmolality, agent, dose, volume, target-rise, duration, line,
    tbw-method.  Empty or None values are "not given".
    """
    given = {k: v for k, v in fields.items() if v is not None and not (isinstance(v, str) and not v.strip())}
    entered = {k: str(v) for k, v in given.items()}

    def need(name: str) -> object:
        if name not in given:
            raise InputError(name, None, "is required")
        return given[name]

    weight = check_plausible("weight", _plain("weight", need("weight"), "kg"), given["weight"])
    age = check_plausible("age", _plain("age", need("age"), "year"), given["age"])
    sex = str(need("sex")).strip().lower()
    if sex not in ("female", "male"):
        raise InputError("sex", given["sex"], "is not a sex osmodose knows", "female or male")
    height = None
    if "height" in given:
        height = check_plausible("height", _plain("height", given["height"], "cm"), given["height"])
    patient = Patient(weight_kg=weight, age_years=age, sex=sex, height_cm=height)  # type: ignore[arg-type]

    def lab(name: str, substance: str | None = None) -> float | None:
        if name not in given:
            return None
        if substance is None:
            value = _plain(name, given[name], "mmol/L")
        else:
            value = _concentration(name, given[name], substance)
        return check_plausible(name, value, given[name])

    sodium = check_plausible("sodium", _plain("sodium", need("sodium"), "mmol/L"), given["sodium"])
    if "urea" in given and "bun" in given:
        raise InputError("bun", given["bun"], "cannot be given together with urea", "urea or bun, not both")
    urea = lab("urea", "urea")
    if "bun" in given:
        bun = parse_quantity("bun", given["bun"], "mg/dL", ("mg/dL", "mmol/L"))
        if bun.check("[mass]/[volume]"):
            bun = bun / molar_mass("urea nitrogen")
        urea = float(bun.m_as("mmol/L"))
        # Judged as urea, but described in mg/dL of nitrogen, the unit a bare BUN is read in.
        in_mg_dl = float((Q_(urea, "mmol/L") * molar_mass("urea nitrogen")).m_as("mg/dL"))
        check_plausible("bun", in_mg_dl, given["bun"])
    osmolality = None
    if "osmolality" in given:
        measured = parse_quantity("osmolality", given["osmolality"], "mOsm/kg", ("mOsm/kg", "mmol/kg"))
        if measured.check("[substance]/[mass]"):
            measured = Q_(measured.m_as("mmol/kg"), "mOsm/kg")  # SI labs write mmol/kg for mOsm/kg
        osmolality = check_plausible("osmolality", float(measured.m_as("mOsm/kg")), given["osmolality"])
    labs = Labs(
        sodium_mmol_l=sodium,
        potassium_mmol_l=lab("potassium"),
        glucose_mmol_l=lab("glucose", "glucose"),
        urea_mmol_l=urea,
        ethanol_mmol_l=lab("ethanol", "ethanol"),
        osmolality_mosm_kg=osmolality,
    )
    line = None
    if "line" in given:
        line = str(given["line"]).strip().lower()
        if line not in ("central", "peripheral"):
            raise InputError("line", given["line"], "is not a line osmodose knows", "central or peripheral")
    tbw_method = None
    if "tbw-method" in given:
        tbw_method = str(given["tbw-method"]).strip().lower()
        if tbw_method not in ("fraction", "watson"):
            raise InputError("tbw-method", given["tbw-method"], "is not a method osmodose knows", "fraction or watson")
    return CheckRequest(
        patient=patient,
        labs=labs,
        dose=_dose_request(given, dose_mode),
        line=line,  # type: ignore[arg-type]
        tbw_method=tbw_method,  # type: ignore[arg-type]
        entered=entered,
    )


def _dose_request(given: dict[str, object], dose_mode: DoseMode | None) -> DoseRequest | None:
    modes = [m for m in ("dose", "volume", "target-rise") if m in given]
    if dose_mode is not None:
        # A form that keeps all three boxes says which one is meant; the others are ignored.
        modes = [m for m in modes if m == dose_mode]
    if "agent" not in given:
        if modes:
            raise InputError(modes[0], given[modes[0]], "needs an agent", "--agent ID")
        return None
    agent_id = str(given["agent"]).strip()
    if not modes:
        raise InputError("agent", agent_id, "needs a dose", "exactly one of dose, volume or target-rise")
    if len(modes) > 1:
        raise InputError(
            modes[1],
            given[modes[1]],
            "cannot be given together with " + modes[0],
            "exactly one of dose, volume or target-rise",
        )
    mode = modes[0]
    raw = given[mode]
    duration = None
    if "duration" in given:
        duration = check_plausible("duration", _plain("duration", given["duration"], "min"), given["duration"])
    if mode == "volume":
        volume = check_plausible("volume", _plain("volume", raw, "mL"), raw)
        return DoseRequest(
            agent_id=agent_id, mode="volume", amount=volume, unit="mL", duration_min=duration, text=str(raw)
        )
    if mode == "target-rise":
        rise = _plain("target-rise", raw, "mmol/L")
        if rise == 0:
            raise InputError("target-rise", raw, "is zero", "a change from -30 to 30 mmol/L, not 0")
        check_plausible("target-rise", rise, raw)
        return DoseRequest(
            agent_id=agent_id, mode="target-rise", amount=rise, unit="mmol/L", duration_min=duration, text=str(raw)
        )
    return parse_dose(agent_id, raw, duration)


_DOSE_ACCEPTED = "g, mL, mmol or mOsm, absolute or per kg (1 g/kg, 5 mL/kg, 50 g, 120 mmol)"
_ABSOLUTE_UNITS: tuple[tuple[str, DoseUnit], ...] = (
    ("[mass]", "g"),
    ("[volume]", "mL"),
    ("[substance]", "mmol"),
    ("[osmotic_amount]", "mOsm"),
)


def parse_dose(agent_id: str, raw: object, duration: float | None = None, field: str = "dose") -> DoseRequest:
    """A dose as typed ("1 g/kg", "50 g", "120 mmol"); `field` names it in errors.

    Verification reads the prescriber's stated dose, and the audit every dose
    cell, with the same parser as --dose, so all accept and reject exactly
    the same text.
    """
    text = str(raw).strip()
    if isinstance(raw, (int, float)) or is_bare_number(text):
        raise InputError(field, raw, "has no unit", _DOSE_ACCEPTED)
    quantity: Quantity = parse_quantity(
        field, text, "g", ("g", "mL", "mmol", "mOsm", "g/kg", "mL/kg", "mmol/kg", "mOsm/kg")
    )
    per_kg = is_per_mass(quantity)
    absolute = (quantity * ureg.kilogram) if per_kg else quantity
    for dimension, unit in _ABSOLUTE_UNITS:
        if absolute.check(dimension):
            amount = float(absolute.to(unit).magnitude)
            break
    else:
        raise InputError(field, raw, "is in the wrong unit", _DOSE_ACCEPTED)
    if amount <= 0:
        raise InputError(field, raw, "is not above zero", _DOSE_ACCEPTED)
    return DoseRequest(
        agent_id=agent_id, mode="dose", amount=amount, unit=unit, per_kg=per_kg, duration_min=duration, text=text
    )
