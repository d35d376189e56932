"""What a check is asked for: validated, frozen, in canonical units.

Front ends (command line, app, verify, course) hand the text a user typed to
`parse_check_request`; every field is read by `fields.read` (its default unit,
molar mass and plausible range from the field table), so every front end reads
input the same way.  The models keep the text as entered beside the normalised
value, for records.  The serum labs model (`Labs`) is made from the field
table: a new lab is one line there.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any, Literal

from pydantic import Field, create_model

from osmodose.case.fields import DOSE_MODES, FIELDS, LAB_FIELDS, URINE_FIELDS, read
from osmodose.case.provenance import DataIn
from osmodose.errors import InputError
from osmodose.frozen import Frozen
from osmodose.science.choices import LINE, SEX, TBW_METHOD, YES_NO, DoseMode, Line, Sex, TbwMethod
from osmodose.science.units import Quantity, is_bare_number, is_per_mass, parse_quantity, ureg

DoseUnit = Literal["g", "mL", "mmol", "mOsm", "mmol/L"]

__all__ = [
    "CheckRequest",
    "DoseMode",
    "DoseRequest",
    "DoseUnit",
    "LabValues",
    "Labs",
    "Line",
    "Patient",
    "Sex",
    "TbwMethod",
    "Urine",
    "given_fields",
    "lab_fields",
    "need",
    "parse_check_request",
    "parse_dose",
    "parse_labs",
    "parse_urine",
    "target_change",
    "target_sodium_error",
]


class Patient(Frozen):
    """The patient, in kg, years and cm."""

    weight_kg: float
    """Actual body weight."""
    age_years: float
    """Age in years (fractions allowed for infants)."""
    sex: Sex
    """Sex used for the total-body-water fractions and the Watson formula."""
    height_cm: float | None = None
    """Height, needed for the Watson formula only."""


class LabValues(Frozen):
    """Base of every model holding serum labs by the field table (`Labs`, an episode's lab entry).

    The lab attributes (`sodium_mmol_l`, ...) are made from `fields.LAB_FIELDS`;
    `value(key)` reads one by its field key.
    """

    if TYPE_CHECKING:  # the generated lab attributes, for the type checker

        def __getattr__(self, name: str) -> Any: ...

    def value(self, key: str) -> float | None:
        """The lab called `key` in the field table ("sodium"), in its canonical unit; None if not measured."""
        result: float | None = getattr(self, FIELDS[key].attr)
        return result

    def lab_values(self) -> dict[str, float | None]:
        """Every lab by field key."""
        return {f.key: self.value(f.key) for f in LAB_FIELDS}


def lab_fields() -> dict[str, Any]:
    """The lab attributes for `create_model`: sodium required, the rest optional, described by the table."""
    return {
        f.attr: (float, Field(description=f.help)) if f.required else (float | None, Field(None, description=f.help))
        for f in LAB_FIELDS
    }


if TYPE_CHECKING:

    class Labs(LabValues):
        """Serum labs in SI units (mmol/L; osmolality mOsm/kg), made from the field table."""

        def __init__(self, **data: Any) -> None: ...

else:
    Labs = create_model("Labs", __base__=LabValues, __doc__="Serum labs in SI units, from the fields.", **lab_fields())


class Urine(Frozen):
    """Urine passed over the same period as the infusion: what the full mass balance takes out."""

    volume_ml: float
    """Urine volume over the infusion's period, mL."""
    sodium_mmol_l: float
    """Urine sodium, mmol/L."""
    potassium_mmol_l: float | None = None
    """Urine potassium, mmol/L; None when not measured (then taken as 0, which makes the projection err high)."""

    @property
    def cations_mmol_l(self) -> float:
        """Na + K of the urine, the urine's term of the balance (potassium 0 when not measured)."""
        return self.sodium_mmol_l + (self.potassium_mmol_l or 0.0)


class DoseRequest(Frozen):
    """How much of which agent: a dose, a volume or a target sodium change."""

    agent_id: str
    """Id of the agent in the formulary."""
    mode: DoseMode
    """Which of --dose, --volume, --target-rise or --target-sodium was given."""
    amount: float
    """The amount in `unit` (for a target sodium: the change from the serum sodium it asks for)."""
    unit: DoseUnit
    """g of solute, mL, mmol of sodium, mOsm, or mmol/L of sodium change."""
    per_kg: bool = False
    """Whether `amount` is per kg of body weight."""
    duration_min: float | None = None
    """Infusion duration, for the rate."""
    text: str = ""
    """The dose as the user wrote it."""


class CheckRequest(Frozen):
    """Everything one check needs besides the formulary."""

    patient: Patient
    labs: Labs
    dose: DoseRequest | None = None
    line: Line | None = None
    """The line the order goes through; no line, no line finding."""
    tbw_method: TbwMethod | None = None
    """Total-body-water method; None takes the formulary's default."""
    entered: dict[str, str] = Field(default_factory=dict)
    """Each field as the user typed it."""
    raised_icp: bool = False
    """The patient has raised intracranial pressure (`--raised-icp`, or ICP readings in a course)."""
    data_in: DataIn | None = None
    """The labs file the case was read from, with each value's origin and age; None when all was typed."""
    urine: Urine | None = None
    """Urine passed over the infusion's period; None: no losses in the projection."""
    tbw_l: float | None = None
    """A total body water to use instead of the estimate (a course's apparent TBW); None: estimated."""


def given_fields(fields: dict[str, object]) -> dict[str, object]:
    """The fields a user filled in: None and blank text are "not given"."""
    return {k: v for k, v in fields.items() if v is not None and not (isinstance(v, str) and not v.strip())}


def need(given: dict[str, object], name: str) -> object:
    """The given value of a required field, or the InputError saying it is required."""
    if name not in given:
        raise InputError(name, None, "is required")
    return given[name]


def parse_check_request(
    fields: dict[str, object], dose_mode: DoseMode | None = None, data_in: DataIn | None = None
) -> CheckRequest:
    """Build a CheckRequest from typed text; raises InputError on the first bad field.

    Keys of `fields` are the field table's (`fields.FIELDS`): the patient, the
    labs and the order.  Empty or None values are "not given".  Values read from
    a labs file (`osmodose.datain`) are quantities, with `data_in` saying where
    each came from.
    """
    given = given_fields(fields)
    entered = {k: _entered(k, v, data_in) for k, v in given.items()}
    weight = read("weight", need(given, "weight"))
    age = read("age", need(given, "age"))
    sex = SEX.read("sex", need(given, "sex"))
    height = read("height", given["height"]) if "height" in given else None
    patient = Patient(weight_kg=weight, age_years=age, sex=sex, height_cm=height)
    labs = parse_labs(given)
    urine = parse_urine(given)
    line = LINE.read("line", given["line"]) if "line" in given else None
    tbw_method = TBW_METHOD.read("tbw-method", given["tbw-method"]) if "tbw-method" in given else None
    return CheckRequest(
        patient=patient,
        labs=labs,
        dose=_dose_request(given, dose_mode, labs.sodium_mmol_l),
        line=line,
        tbw_method=tbw_method,
        entered=entered,
        raised_icp=read_flag("raised-icp", given),
        data_in=data_in,
        urine=urine,
    )


URINE_VOLUME_ACCEPTED = "a urine volume with it, e.g. --urine-volume 800"
URINE_SODIUM_ACCEPTED = "the urine's sodium in mmol/L, e.g. --urine-sodium 40"


def parse_urine(fields: dict[str, object]) -> Urine | None:
    """Urine passed over the infusion's period, or None when none is typed.

    Each value is read by the field table; a volume needs the urine's sodium
    (the balance cannot guess it), and a sodium or potassium needs a volume.
    """
    given = given_fields(fields)
    values = {f.key: read(f.key, given[f.key]) for f in URINE_FIELDS if f.key in given}
    if not values:
        return None
    if "urine-volume" not in values:
        key = next(iter(values))
        raise InputError(key, given[key], "needs a urine volume", URINE_VOLUME_ACCEPTED)
    if "urine-sodium" not in values:
        raise InputError("urine-sodium", None, "is required with a urine volume", URINE_SODIUM_ACCEPTED)
    return Urine(
        volume_ml=values["urine-volume"],
        sodium_mmol_l=values["urine-sodium"],
        potassium_mmol_l=values.get("urine-potassium"),
    )


def read_flag(key: str, given: dict[str, object]) -> bool:
    """A flag field: True for "yes" (or True), False when "no" or not given; other words are an InputError."""
    if key not in given:
        return False
    raw = given[key]
    if isinstance(raw, bool):
        return raw
    return YES_NO.read(key, raw) == "yes"


def _entered(key: str, value: object, data_in: DataIn | None) -> str:
    """What to record as entered: the text typed, or a file's value as the file wrote it."""
    origin = data_in.origin(key) if data_in is not None else None
    if origin is not None and origin.source == "file":
        return origin.shown
    return str(value)


def parse_labs(fields: dict[str, object]) -> Labs:
    """The serum labs among typed `fields`, each read by the field table; sodium is required.

    A lab typed in another form (BUN for urea) is read into its lab, and may not
    be given together with it.
    """
    given = given_fields(fields)
    need(given, "sodium")
    values: dict[str, float | None] = {}
    for field in FIELDS.values():
        if field.group != "labs" or field.key not in given:
            continue
        if field.into is not None and field.into in given:
            together = f"{field.into} or {field.key}, not both"
            raise InputError(field.key, given[field.key], f"cannot be given together with {field.into}", together)
        values[FIELDS[field.into or field.key].attr] = read(field.key, given[field.key])
    return Labs(**values)


_ONE_ORDER = "exactly one of dose, volume, target-rise or target-sodium"
_RISE_NOT_ZERO = "a change from -30 to 30 mmol/L, not 0"


def target_change(target_sodium_mmol_l: Any, serum_sodium_mmol_l: Any) -> Any:
    """The sodium change a target sodium asks for: target minus serum, in mmol/L (floats or columns alike)."""
    return target_sodium_mmol_l - serum_sodium_mmol_l


def target_sodium_error(raw: object, target_mmol_l: float, serum_mmol_l: float) -> InputError | None:
    """Why a target sodium cannot be ordered (it is the serum sodium, or too far from it), or None.

    The change it asks for is held to the plausible range of a typed change
    (`target-rise`), so a target sodium and the change it stands for are
    accepted alike; the error names the target as typed.
    """
    change = target_change(target_mmol_l, serum_mmol_l)
    if change == 0:
        return InputError(
            "target-sodium",
            raw,
            f"is the serum sodium already ({serum_mmol_l:g} mmol/L)",
            f"a target other than {serum_mmol_l:g} mmol/L",
        )
    bounds = FIELDS["target-rise"].bounds
    if not bounds.low <= change <= bounds.high:
        low, high = serum_mmol_l + bounds.low, serum_mmol_l + bounds.high
        return InputError(
            "target-sodium",
            raw,
            f"is {change:+g} mmol/L from the serum sodium of {serum_mmol_l:g} mmol/L, outside the plausible change",
            f"a target from {low:g} to {high:g} mmol/L, within {bounds.high:g} mmol/L of the serum sodium",
        )
    return None


def _dose_request(given: dict[str, object], dose_mode: DoseMode | None, sodium_mmol_l: float) -> DoseRequest | None:
    modes = [m for m in DOSE_MODES if m in given]
    if dose_mode is not None:
        # A form that keeps all three boxes says which one is meant; the others are ignored.
        modes = [m for m in modes if m == dose_mode]
    if "agent" not in given:
        if modes:
            raise InputError(modes[0], given[modes[0]], "needs an agent", "--agent ID")
        return None
    agent_id = str(given["agent"]).strip()
    if not modes:
        raise InputError("agent", agent_id, "needs a dose", _ONE_ORDER)
    if len(modes) > 1:
        raise InputError(modes[1], given[modes[1]], "cannot be given together with " + modes[0], _ONE_ORDER)
    mode = modes[0]
    raw = given[mode]
    duration = read("duration", given["duration"]) if "duration" in given else None
    if mode == "volume":
        volume = read("volume", raw)
        return DoseRequest(
            agent_id=agent_id, mode="volume", amount=volume, unit="mL", duration_min=duration, text=str(raw)
        )
    if mode == "target-rise":
        rise = read("target-rise", raw)
        if rise == 0:
            raise InputError("target-rise", raw, "is zero", _RISE_NOT_ZERO)
        return DoseRequest(
            agent_id=agent_id, mode="target-rise", amount=rise, unit="mmol/L", duration_min=duration, text=str(raw)
        )
    if mode == "target-sodium":
        target = read("target-sodium", raw)
        problem = target_sodium_error(raw, target, sodium_mmol_l)
        if problem is not None:
            raise problem
        change = target_change(target, sodium_mmol_l)
        return DoseRequest(
            agent_id=agent_id, mode="target-sodium", amount=change, unit="mmol/L", duration_min=duration, text=str(raw)
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
