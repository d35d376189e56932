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

from osmodose.case.choices import DOSE_MODE, LINE, SEX, TBW_METHOD, Choice
from osmodose.errors import InputError
from osmodose.science.ranges import Range

if TYPE_CHECKING:
    from osmodose.science.units import Quantity

# pint is imported by the readers below, not here: the table itself is plain data, so the app
# can lay its form out from it before pint has loaded (the app's first frame is timed, issue 11).

Group = Literal["patient", "labs", "order", "written", "reading", "entry"]
Kind = Literal["quantity", "choice", "text", "dose"]


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


def _lab(
    key: str,
    what: str,
    low: float,
    high: float,
    *,
    unit: str = "mmol/L",
    mass: bool = False,
    substance: str | None = None,
    required: bool = False,
    hint: str = "",
    attr: str = "",
) -> CaseField:
    """A serum lab: mmol/L unless said, mg/dL accepted where it has a molar mass, kept as `<key>_mmol_l`."""
    return CaseField(
        key,
        "labs",
        key,
        f"{what}; bare number = {unit}" + (" (mg/dL accepted)" if mass else ""),
        hint or (f"{unit} or mg/dL" if mass else unit),
        unit=unit,
        accepted=(unit, "mg/dL") if mass else (),
        substance=substance,
        plausible=Range(low, high, unit),
        required=required,
        attr=attr or f"{key}_{unit.replace('/', '_').lower()}",
    )


FIELDS: dict[str, CaseField] = {
    f.key: f
    for f in (
        # --- the patient ---------------------------------------------------------------------
        CaseField(
            "weight",
            "patient",
            "weight",
            "body weight; bare number = kg (e.g. 70, 176lb)",
            "kg, or 176 lb",
            unit="kg",
            plausible=Range(0.3, 400.0, "kg"),
            required=True,
            attr="weight_kg",
        ),
        CaseField(
            "age",
            "patient",
            "age",
            "age; bare number = years",
            "years",
            unit="year",
            plausible=Range(0.0, 120.0, "years"),
            required=True,
            attr="age_years",
        ),
        CaseField(
            "sex",
            "patient",
            "sex",
            "sex, for the total-body-water fractions and the Watson formula",
            kind="choice",
            choice=SEX,
            required=True,
            attr="sex",
            empty="choose",
        ),
        CaseField(
            "height",
            "patient",
            "height",
            "height; bare number = cm (needed for --tbw-method watson)",
            "cm (for Watson)",
            unit="cm",
            plausible=Range(25.0, 250.0, "cm"),
            attr="height_cm",
        ),
        CaseField(
            "tbw-method",
            "patient",
            "TBW method",
            "total-body-water method: fraction of weight (Adrogue-Madias) or Watson (needs --height); "
            "default: the formulary's",
            kind="choice",
            choice=TBW_METHOD,
            attr="tbw_method",
            empty="default",
        ),
        # --- serum labs, SI units ------------------------------------------------------------
        _lab("sodium", "serum sodium", 90.0, 200.0, required=True),
        _lab("potassium", "serum potassium", 1.0, 10.0),
        _lab("glucose", "serum glucose", 0.5, 100.0, mass=True, substance="glucose"),
        _lab("urea", "serum urea", 0.5, 100.0, mass=True, substance="urea", hint="mmol/L"),
        # BUN is urea as mg/dL of nitrogen (two N per urea, N2 28.01 g/mol): the urea range, 0.5
        # and 100 mmol/L, is 1.4 and 280.1 mg/dL.  Read into urea; judged in the unit it is typed in.
        CaseField(
            "bun",
            "labs",
            "or BUN",
            "blood urea nitrogen instead of urea; bare number = mg/dL",
            "mg/dL",
            unit="mg/dL",
            accepted=("mg/dL", "mmol/L"),
            canonical="mmol/L",
            substance="urea nitrogen",
            plausible=Range(1.4, 280.1, "mg/dL"),
            into="urea",
        ),
        # Not in the reference: an ethanol level above 200 mmol/L (about 920 mg/dL) is beyond
        # any survived level; chosen to catch typing errors (common practice).
        _lab("ethanol", "serum ethanol", 0.0, 200.0, mass=True, substance="ethanol"),
        CaseField(
            "osmolality",
            "labs",
            "osmolality",
            "measured serum osmolality; bare number = mOsm/kg",
            "measured, mOsm/kg",
            unit="mOsm/kg",
            accepted=("mOsm/kg", "mmol/kg"),
            plausible=Range(200.0, 450.0, "mOsm/kg"),
            attr="osmolality_mosm_kg",
        ),
        # --- the order -------------------------------------------------------------------------
        CaseField("agent", "order", "agent", "agent id from the formulary", kind="text", empty="no order"),
        CaseField(
            "dose",
            "order",
            "dose",
            "dose per kg (1g/kg, 5mL/kg) or absolute (50g, 120mmol)",
            "1 g/kg, 5 mL/kg, 50 g",
            kind="dose",
        ),
        # Order sizes: chosen to catch a tenfold slip, not to judge (common practice).
        CaseField(
            "volume",
            "order",
            "volume",
            "volume; bare number = mL",
            "mL, or 0.25 L",
            unit="mL",
            plausible=Range(0.1, 5000.0, "mL"),
            attr="volume_ml",
        ),
        CaseField(
            "target-rise",
            "order",
            "target Na change",
            "the sodium change wanted; bare number = mmol/L",
            "mmol/L, e.g. 6 or -4",
            unit="mmol/L",
            plausible=Range(-30.0, 30.0, "mmol/L"),
        ),
        CaseField(
            "duration",
            "order",
            "duration",
            "infusion time; bare number = minutes (e.g. 20, 2h)",
            "min, or 2 h",
            unit="min",
            plausible=Range(1.0, 7 * 24 * 60.0, "min"),
            attr="duration_min",
        ),
        CaseField(
            "line",
            "order",
            "line",
            "the line the order runs through; without it no line check",
            kind="choice",
            choice=LINE,
            attr="line",
            empty="not stated",
        ),
        # --- the order as written, for verification ------------------------------------------
        CaseField(
            "rate",
            "written",
            "rate",
            "rate as written; bare number = mL/h (2mL/min accepted)",
            "mL/h",
            unit="mL/h",
            attr="rate_ml_h",
        ),
        CaseField(
            "stated-dose",
            "written",
            "stated dose",
            "the prescriber's stated dose: per kg (1g/kg) or absolute (70g, 120mmol)",
            "1 g/kg, 70 g",
            kind="dose",
        ),
        CaseField(
            "stated-sodium",
            "written",
            "expected Na",
            "the serum sodium the prescriber expects after it; bare number = mmol/L",
            "mmol/L",
            unit="mmol/L",
            plausible=Range(90.0, 200.0, "mmol/L"),
            attr="stated_sodium_mmol_l",
        ),
        # --- bedside readings: chosen to catch a slipped digit or a value in the wrong box, not
        # to judge (common practice); ICP may be a little below zero with the head up or the
        # drain open.
        CaseField(
            "map",
            "reading",
            "MAP",
            "mean arterial pressure; bare number = mmHg",
            "mmHg",
            unit="mmHg",
            plausible=Range(10.0, 250.0, "mmHg"),
            required=True,
            attr="map_mmhg",
        ),
        CaseField(
            "icp",
            "reading",
            "ICP",
            "intracranial pressure; bare number = mmHg",
            "mmHg",
            unit="mmHg",
            plausible=Range(-10.0, 150.0, "mmHg"),
            required=True,
            attr="icp_mmhg",
        ),
        # --- what every course entry carries ---------------------------------------------------
        CaseField(
            "time",
            "entry",
            "time",
            "ISO 8601 time, e.g. 2026-12-01T08:30+00:00; without an offset = this computer's local time; or now",
            "2026-12-01T08:30+00:00, or now",
            kind="text",
            required=True,
        ),
        CaseField("label", "entry", "label", "free text to tell episodes apart (bed, initials)", kind="text"),
    )
}

#: The serum labs kept on a request and an episode's lab entry, in the order they are shown.
LAB_FIELDS: tuple[CaseField, ...] = tuple(f for f in FIELDS.values() if f.group == "labs" and f.into is None)
#: Every lab a user may type, including those read into another (BUN into urea).
LAB_KEYS: tuple[str, ...] = tuple(f.key for f in FIELDS.values() if f.group == "labs")
DOSE_MODES: tuple[str, ...] = DOSE_MODE.values


def keys(*groups: Group) -> tuple[str, ...]:
    """The keys of the fields in `groups`, in table order."""
    return tuple(f.key for f in FIELDS.values() if f.group in groups)


#: The order as a prescriber writes it, for verification: the check's order by volume (the volume
#: is what will be given, so no dose or target change) and the prescriber's own figures.
WRITTEN_ORDER_KEYS: tuple[str, ...] = tuple(
    f.key for f in FIELDS.values() if f.group in ("order", "written") and f.key not in ("dose", "target-rise")
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
    from osmodose.science.units import Q_  # noqa: PLC0415 (see the imports)

    return _convert(Q_(1.0, unit), target, FIELDS[key].substance)


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


def read_choice(key: str, raw: object) -> str:
    """A choice field's value, by its choice's one parser and message (`SEX.read` and the like are typed)."""
    choice = FIELDS[key].choice
    if choice is None:
        raise ValueError(f"{key} is not a choice")
    return str(choice.read(key, raw))
