"""Every field a user types, declared once: its key, words, units, molar mass, plausible range and choices.

The command line's options (`check`, `verify`, `course`), the app's forms, the
audit's columns, the episode file's lab entries and the request models are all
made from this table, and every front end reads a value through `read`, so a
field reads the same everywhere.  A new field is one `CaseField` here plus its
use in the formulas.

Plausible ranges catch typing slips (a slipped decimal point, a value in the
wrong box); outside one is an input error, never a finding.  They are common
practice, chosen to catch errors, not to judge the patient; clinical limits
live in the formulary.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, Literal

from osmodose.case.loinc import Loinc, memory, profile, value_set
from osmodose.errors import InputError
from osmodose.science.choices import DOSE_MODE, LINE, SEX, TARGET_MODES, TBW_METHOD, YES_NO, Choice
from osmodose.science.ranges import Range

if TYPE_CHECKING:
    from osmodose.science.units import Quantity

# pint is imported by the readers below, not here: the table itself is plain data, so the app
# can lay its form out from it before pint has loaded (the app's first frame is timed, issue 11).

Group = Literal["patient", "condition", "labs", "urine", "order", "written", "reading", "entry"]
Kind = Literal["quantity", "choice", "text", "dose", "flag"]


@dataclass(frozen=True)
class CaseField:
    """One field a user types.

    `unit` is what a bare number means and what the plausible range is written
    in; `accepted` lists one example unit per accepted dimension; `canonical` is
    the engine's unit (the unit unless given); `substance` names the molar mass
    that turns a mass concentration (mg/dL) into mmol/L.  `into` names the field
    whose value this one gives in another form (BUN gives urea).  `attr` is the
    attribute and JSON key the value is kept under (`sodium_mmol_l`).  `empty`
    says what leaving the field empty means, where that is not simply "not given".
    `loinc` lists the LOINC codes a hospital's records give the value under
    (`case.loinc`): the FHIR reader maps Observations to fields by them alone.
    """

    key: str
    group: Group
    label: str
    help: str
    hint: str = ""
    kind: Kind = "quantity"
    unit: str = ""
    accepted: tuple[str, ...] = ()
    canonical: str = ""
    substance: str | None = None
    plausible: Range | None = None
    required: bool = False
    choice: Choice[Any] | None = None
    into: str | None = None
    attr: str = ""
    empty: str = ""
    loinc: tuple[Loinc, ...] = ()

    @property
    def option(self) -> str:
        """The command-line option: `--sodium`."""
        return "--" + self.key

    @property
    def examples(self) -> tuple[str, ...]:
        return self.accepted or (self.unit,)

    @property
    def engine_unit(self) -> str:
        return self.canonical or self.unit

    @property
    def bounds(self) -> Range:
        """The plausible range of a field that has one."""
        if self.plausible is None:
            raise ValueError(f"{self.key} has no plausible range")
        return self.plausible

    def check_range(self, value: float, shown: object) -> float:
        """`value` (in `unit`) if inside the plausible range, else an InputError quoting what was typed."""
        bounds = self.plausible
        if bounds is not None and not (bounds.low <= value <= bounds.high):
            raise InputError(self.key, shown, "is outside the plausible range", bounds.describe())
        return value


def _number(
    key: str,
    group: Group,
    label: str,
    help_text: str,
    hint: str,
    unit: str,
    low: float,
    high: float,
    attr: str = "",
    shown_unit: str = "",
    **more: Any,
) -> CaseField:
    """A field typed as a number with a unit, plausible from `low` to `high` in `unit` (written `shown_unit`)."""
    plausible = Range(low, high, shown_unit or unit)
    return CaseField(key, group, label, help_text, hint, unit=unit, plausible=plausible, attr=attr, **more)


def _lab(key: str, what: str, low: float, high: float, *, mass: str | None = None, **more: Any) -> CaseField:
    """A serum lab in mmol/L kept as `<key>_mmol_l`; with `mass`, mg/dL is read through that molar mass."""
    help_text = f"{what}; bare number = mmol/L" + (" (mg/dL accepted)" if mass else "")
    hint = more.pop("hint", "mmol/L or mg/dL" if mass else "mmol/L")
    accepted = ("mmol/L", "mg/dL") if mass else ()
    return _number(
        key,
        "labs",
        key,
        help_text,
        hint,
        "mmol/L",
        low,
        high,
        f"{key}_mmol_l",
        accepted=accepted,
        substance=mass,
        **more,
    )


def _choice(
    key: str, group: Group, label: str, help_text: str, choice: Choice[Any], empty: str, **more: Any
) -> CaseField:
    """A field whose value is one of a fixed set of words."""
    return CaseField(
        key, group, label, help_text, kind="choice", choice=choice, attr=key.replace("-", "_"), empty=empty, **more
    )


TIME_HELP = "ISO 8601 time, e.g. 2026-12-01T08:30+00:00; without an offset = this computer's local time; or now"

# Ranges: typing-error catchers (common practice). Order sizes catch a tenfold slip. Ethanol
# above 200 mmol/L (about 920 mg/dL) is beyond any survived level. BUN is urea as mg/dL of
# nitrogen (two N per urea, N2 28.01 g/mol): the urea range 0.5-100 mmol/L is 1.4-280.1 mg/dL,
# read into urea and judged in the unit it is typed in. Bedside pressures catch a slipped digit;
# ICP may be a little below zero with the head up or the drain open.
# LOINC codes of the rows below; `case.loinc` says where each was seen (value set, profile, memory).
_WEIGHT = (value_set("29463-7", "Body weight"),)
_HEIGHT = (value_set("8302-2", "Body height"),)
_SODIUM = (value_set("2951-2", "Sodium [Moles/volume] in Serum or Plasma"),)
_POTASSIUM = (value_set("2823-3", "Potassium [Moles/volume] in Serum or Plasma"),)
_GLUCOSE = (
    value_set("2345-7", "Glucose [Mass/volume] in Serum or Plasma"),
    value_set("14749-6", "Glucose [Moles/volume] in Serum or Plasma"),
)
_UREA = (
    value_set("22664-7", "Urea [Moles/volume] in Serum or Plasma"),
    value_set("3091-6", "Urea [Mass/volume] in Serum or Plasma"),
)
_BUN = (value_set("3094-0", "Urea nitrogen [Mass/volume] in Serum or Plasma"),)
_ETHANOL = (memory("5643-2", "Ethanol [Mass/volume] in Serum or Plasma"),)
_OSMOLALITY = (value_set("2692-2", "Osmolality of Serum or Plasma"),)
_MAP = (profile("8478-0", "Mean blood pressure"),)
_ICP = (profile("60956-0", "Intracranial pressure (ICP)"),)

FIELDS: dict[str, CaseField] = {
    f.key: f
    for f in (
        # the patient
        _number("weight", "patient", "weight", "body weight; bare number = kg (e.g. 70, 176lb)", "kg, or 176 lb",
                "kg", 0.3, 400.0, "weight_kg", required=True, loinc=_WEIGHT),
        _number("age", "patient", "age", "age; bare number = years", "years", "year", 0.0, 120.0, "age_years",
                shown_unit="years", required=True),
        _choice("sex", "patient", "sex", "sex, for the total-body-water fractions and the Watson formula", SEX,
                "choose", required=True),
        _number("height", "patient", "height", "height; bare number = cm (needed for --tbw-method watson)",
                "cm (for Watson)", "cm", 25.0, 250.0, "height_cm", loinc=_HEIGHT),
        _choice("tbw-method", "patient", "TBW method", "total-body-water method: fraction of weight "
                "(Adrogue-Madias) or Watson (needs --height); default: the formulary's", TBW_METHOD, "default"),
        # the patient's condition, as the bedside knows it: a flag, given on the command line as
        # `--raised-icp` alone, "yes"/"no" in a form or a column; a course knows it from its ICP readings
        CaseField("raised-icp", "condition", "raised ICP", "the patient has raised intracranial pressure: an order "
                  "that lowers sodium (a hypotonic fluid) is warned", kind="flag", choice=YES_NO, attr="raised_icp",
                  empty="no"),
        # serum labs, SI units
        _lab("sodium", "serum sodium", 90.0, 200.0, required=True, loinc=_SODIUM),
        _lab("potassium", "serum potassium", 1.0, 10.0, loinc=_POTASSIUM),
        _lab("glucose", "serum glucose", 0.5, 100.0, mass="glucose", loinc=_GLUCOSE),
        _lab("urea", "serum urea", 0.5, 100.0, mass="urea", hint="mmol/L", loinc=_UREA),
        _number("bun", "labs", "or BUN", "blood urea nitrogen instead of urea; bare number = mg/dL", "mg/dL",
                "mg/dL", 1.4, 280.1, accepted=("mg/dL", "mmol/L"), canonical="mmol/L", substance="urea nitrogen",
                into="urea", loinc=_BUN),
        _lab("ethanol", "serum ethanol", 0.0, 200.0, mass="ethanol", loinc=_ETHANOL),
        _number("osmolality", "labs", "osmolality", "measured serum osmolality; bare number = mOsm/kg",
                "measured, mOsm/kg", "mOsm/kg", 200.0, 450.0, "osmolality_mosm_kg", accepted=("mOsm/kg", "mmol/kg"),
                loinc=_OSMOLALITY),
        # urine passed over the same period as the infusion (the full mass balance): 20 L is above the largest
        # outputs over a day (diabetes insipidus), urine sodium rarely passes 300 and potassium 200 mmol/L
        # (from memory); typing-error catchers, no LOINC codes (a spot urine is not the urine of the period)
        _number("urine-volume", "urine", "urine vol", "urine expected over the same period as the infusion; "
                "bare number = mL (e.g. 800, 1.2L)", "mL, same period", "mL", 0.0, 20000.0, "urine_volume_ml"),
        _number("urine-sodium", "urine", "urine Na", "urine sodium, needed with a urine volume; bare number = mmol/L",
                "mmol/L", "mmol/L", 0.0, 400.0, "urine_sodium_mmol_l"),
        _number("urine-potassium", "urine", "urine K", "urine potassium; bare number = mmol/L (not given: taken as "
                "0, which overstates the rise)", "mmol/L", "mmol/L", 0.0, 250.0, "urine_potassium_mmol_l"),
        # the order
        CaseField("agent", "order", "agent", "agent id from the formulary", kind="text", empty="no order"),
        CaseField("dose", "order", "dose", "dose per kg (1g/kg, 5mL/kg) or absolute (50g, 120mmol)",
                  "1 g/kg, 5 mL/kg, 50 g", kind="dose"),
        _number("volume", "order", "volume", "volume; bare number = mL", "mL, or 0.25 L", "mL", 0.1, 5000.0,
                "volume_ml"),
        _number("target-rise", "order", "target Na change",
                "the sodium change wanted (negative to lower it); bare number = mmol/L", "mmol/L, e.g. 6 or -4",
                "mmol/L", -30.0, 30.0),
        _number("target-sodium", "order", "target Na",
                "the serum sodium wanted after the order (read as a change from the serum sodium); "
                "bare number = mmol/L", "mmol/L, e.g. 134", "mmol/L", 90.0, 200.0),
        _number("duration", "order", "duration", "infusion time; bare number = minutes (e.g. 20, 2h)",
                "min, or 2 h", "min", 1.0, 7 * 24 * 60.0, "duration_min"),
        _choice("line", "order", "line", "the line the order runs through; without it no line check", LINE,
                "not stated"),
        # the order as written, for verification
        CaseField("rate", "written", "rate", "rate as written; bare number = mL/h (2mL/min accepted)", "mL/h",
                  unit="mL/h", attr="rate_ml_h"),
        CaseField("stated-dose", "written", "stated dose",
                  "the prescriber's stated dose: per kg (1g/kg) or absolute (70g, 120mmol)", "1 g/kg, 70 g",
                  kind="dose"),
        _number("stated-sodium", "written", "expected Na",
                "the serum sodium the prescriber expects after it; bare number = mmol/L", "mmol/L", "mmol/L",
                90.0, 200.0, "stated_sodium_mmol_l"),
        # bedside readings
        _number("map", "reading", "MAP", "mean arterial pressure; bare number = mmHg", "mmHg", "mmHg", 10.0,
                250.0, "map_mmhg", required=True, loinc=_MAP),
        _number("icp", "reading", "ICP", "intracranial pressure; bare number = mmHg", "mmHg", "mmHg", -10.0,
                150.0, "icp_mmhg", required=True, loinc=_ICP),
        # what every course entry carries
        CaseField("time", "entry", "time", TIME_HELP, "2026-12-01T08:30+00:00, or now", kind="text", required=True),
        CaseField("label", "entry", "label", "free text to tell episodes apart (bed, initials)", kind="text"),
        _number("over", "entry", "over", "the period a urine output was collected over, ending at its time; bare "
                "number = minutes (e.g. 60, 4h)", "min, or 4 h", "min", 1.0, 7 * 24 * 60.0, "over_min"),
    )
}  # fmt: skip

#: Each LOINC code of the table, with the field it gives: the FHIR reader's one map.
LOINC_FIELDS: dict[str, tuple[CaseField, Loinc]] = {code.code: (f, code) for f in FIELDS.values() for code in f.loinc}

#: The serum labs kept on a request and an episode's lab entry, in the order they are shown.
LAB_FIELDS: tuple[CaseField, ...] = tuple(f for f in FIELDS.values() if f.group == "labs" and f.into is None)
#: Every lab a user may type, including those read into another (BUN into urea).
LAB_KEYS: tuple[str, ...] = tuple(f.key for f in FIELDS.values() if f.group == "labs")
DOSE_MODES: tuple[str, ...] = DOSE_MODE.values
#: Urine passed over the infusion's period: volume, sodium, potassium (the full mass balance).
URINE_FIELDS: tuple[CaseField, ...] = tuple(f for f in FIELDS.values() if f.group == "urine")


def keys(*groups: Group) -> tuple[str, ...]:
    """The keys of the fields in `groups`, in table order."""
    return tuple(f.key for f in FIELDS.values() if f.group in groups)


#: The order as a prescriber writes it, for verification: the check's order by volume (the volume
#: is what will be given, so no dose or target change) and the prescriber's own figures.
WRITTEN_ORDER_KEYS: tuple[str, ...] = tuple(
    f.key for f in FIELDS.values() if f.group in ("order", "written") and f.key not in ("dose", *TARGET_MODES)
)


def _convert(quantity: Quantity, unit: str, substance: str | None) -> float:
    """`quantity` in `unit`, through the substance's molar mass where the dimensions differ."""
    from osmodose.science.chemistry import molar_mass  # noqa: PLC0415 (see the imports)
    from osmodose.science.units import as_osmolar, ureg  # noqa: PLC0415

    target = ureg.parse_units(unit)
    if quantity.dimensionality != target.dimensionality and substance is not None:
        if quantity.check("[mass]/[volume]"):
            quantity = quantity / molar_mass(substance)
        elif quantity.check("[substance]/[volume]"):
            quantity = quantity * molar_mass(substance)
    return float(as_osmolar(quantity, unit).m_as(unit))


@functools.cache
def conversion(key: str, unit: str, target: str) -> float:
    """What one `unit` of field `key` is worth in `target`: the factor every reader multiplies by.

    A check's typed value and an audit's whole column are converted by the same
    factor, so both give the same float for the same text.
    """
    from osmodose.science.units import one  # noqa: PLC0415 (see the imports)

    return _convert(one(unit), target, FIELDS[key].substance)


def read(key: str, raw: object, shown: object | None = None) -> float:
    """What the user typed for field `key`, in its engine unit, checked against its plausible range.

    A bare number is in the field's unit; any unit of an accepted dimension is
    converted (mass concentrations through the molar mass, mmol/kg of
    osmolality as mOsm/kg).  The range is judged in the unit the field is
    written in, so a BUN is judged in mg/dL of nitrogen.  `shown` is what
    errors quote (the raw text by default).
    """
    from osmodose.science.units import parse_quantity  # noqa: PLC0415 (see the imports)

    field = FIELDS[key]
    shown = raw if shown is None else shown
    plain = _plain_number(raw)
    if plain is not None:
        number, unit = plain, field.unit
    else:
        quantity = parse_quantity(key, raw, field.unit, field.examples)
        number, unit = float(quantity.magnitude), str(quantity.units)
    if not _finite(number):
        parse_quantity(key, str(raw), field.unit, field.examples)  # "1e999": raises with the usual words
    field.check_range(number * conversion(key, unit, field.unit), shown)
    return number * conversion(key, unit, field.engine_unit)


def _plain_number(raw: object) -> float | None:
    """A number given as such ("70", 70): in the field's unit, with no unit to parse."""
    from osmodose.science.units import is_bare_number  # noqa: PLC0415 (see the imports)

    if isinstance(raw, str) and is_bare_number(raw):
        return float(raw)
    if isinstance(raw, (int, float)) and not isinstance(raw, bool) and _finite(raw):
        return float(raw)
    return None


def _finite(number: float) -> bool:
    try:
        value = float(number)
    except OverflowError:  # an int too large for a float
        return False
    return value - value == 0.0
