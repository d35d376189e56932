"""The package's one pint registry and the parsing of every quantity a user types.

All of osmodose shares `ureg`; a second registry would make quantities from two
places refuse to combine.  The trade's own units are defined here and only here:

* `osmole` (Osm, mOsm) is its own base dimension, so an osmolar figure can never
  be confused with a molar one: the number of osmoles per mole of solute is an
  explicit factor (see `chemistry`).
* `equivalent` (Eq, mEq) equals the mole.  That is exact for the monovalent ions
  osmodose handles (Na+, K+, Cl-, HCO3-); a divalent ion would need its own factor.
* `percent_wv` is the pharmacy's % w/v: grams of solute per 100 mL of solution.
"""

from __future__ import annotations

import functools
import math
import re
import tokenize
from collections.abc import Iterable
from typing import Any

import pint

from osmodose.errors import InputError

_DEFINITIONS = (
    "osmole = [osmotic_amount] = Osm = osmol",
    "equivalent = mole = Eq",
    "percent_wv = gram / deciliter = pct_wv",
)


def _make_registry() -> pint.UnitRegistry:
    """Build the registry, using pint's on-disk cache when the folder is writable.

    The cache makes start-up about ten times faster (the command line is timed
    against bare pint); a read-only home only costs speed, never correctness.
    """
    registry: pint.UnitRegistry
    try:
        registry = pint.UnitRegistry(cache_folder=":auto:")
    except OSError:
        registry = pint.UnitRegistry()
    for definition in _DEFINITIONS:
        registry.define(definition)
    _memoise_unit_parsing(registry)
    return registry


def _memoise_unit_parsing(registry: pint.UnitRegistry) -> None:
    """Remember each parsed unit string.

    pint's own cache only serves strings that are a unit's name, so "mmol/L",
    "kg" or "mL/h" were parsed again on every quantity made or converted: about
    40 us each, some 4 ms for one run of the engine.  The registry's units are
    all defined above, before any parsing, and parsed units are immutable, so
    remembering them cannot change a result.  Errors are not remembered.
    """
    parse = getattr(registry, "_parse_units_as_container", None)
    if parse is None:  # a pint without this method: stay with its own behaviour
        return
    # pint's stubs declare the method fixed; replacing it with its memoised self is the point here.
    registry._parse_units_as_container = functools.lru_cache(maxsize=4096)(parse)  # type: ignore[method-assign]


ureg: pint.UnitRegistry = _make_registry()
Q_ = ureg.Quantity
Quantity = pint.Quantity
_OSMOLE_PER_MOLE = Q_(1.0, "mOsm/mmol")

_PERCENT_WV = re.compile(r"%\s*(?:w\s*/\s*v|\(\s*w\s*/\s*v\s*\))", re.IGNORECASE)
_BARE_PERCENT = re.compile(r"%")
_NUMBER = re.compile(r"^[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?$")
_LEADING_NUMBER = re.compile(r"^[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?")
_EXPONENT = re.compile(r"(?:\*\*|\^)\s*[+-]?\d+")
_POWER = re.compile(r"\*\*|\^")
_SMALL_POWER = re.compile(r"(?:\*\*|\^)\s*[+-]?\d{1,2}(?![\d.(])")
#: A UCUM annotation after a unit, "{H2O}" in "mOsm/kg{H2O}": a note, never a unit (UCUM 2.2, section 2.6).
_ANNOTATION = re.compile(r"(?<=[A-Za-z\]\)%])\{[!-z|~]*\}")

# The errors pint's parser can raise for text that is not a unit expression.  Its
# evaluator asserts on a dangling operator ("1 mL/", "4-", "5 //"), and evaluates
# arithmetic, so "1/0" and "722^777" raise ZeroDivisionError and OverflowError
# (both ArithmeticError).
_PARSE_ERRORS = (
    pint.PintError,
    ValueError,
    TypeError,
    SyntaxError,
    AttributeError,
    tokenize.TokenError,
    AssertionError,
    ArithmeticError,
)


@functools.lru_cache(maxsize=256)
def dimension_of(units: str) -> pint.util.UnitsContainer:
    """The dimensionality of a unit expression written by us (never user text)."""
    return ureg.parse_units(units).dimensionality


def _describe_units(units: Iterable[str]) -> str:
    return " or ".join(units)


def parse_quantity(
    field: str,
    raw: object,
    default_unit: str,
    accepted_units: Iterable[str] | None = None,
    percent_is_wv: bool = False,
) -> pint.Quantity:
    """Read what a user typed into a quantity of one of the accepted dimensions.

    A bare number means `default_unit`, the unit the field is usually written in.
    `accepted_units` lists example units, one per accepted dimension (the
    default unit's dimension when omitted).  Text in any other dimension, or
    text that is no quantity at all, is an `InputError` naming the field.
    """
    examples = list(accepted_units) if accepted_units is not None else [default_unit]
    accepted_dims = [dimension_of(unit) for unit in examples]
    hint = _describe_units(examples)
    if isinstance(raw, pint.Quantity):
        # Re-express a quantity built with another registry in ours: quantities of two
        # registries refuse to combine, so passing it through would fail later.
        quantity = raw if raw._REGISTRY is ureg else Q_(raw.magnitude, str(raw.units))
    elif isinstance(raw, bool) or raw is None:
        raise InputError(field, raw, "is not a quantity", f"a number in {hint}")
    elif isinstance(raw, (int, float)):
        if not _is_finite_number(raw):
            raise InputError(field, raw, "is not a finite number", f"a number in {hint}")
        quantity = Q_(float(raw), default_unit)
    elif isinstance(raw, str):
        quantity = _parse_text(field, raw, default_unit, hint, percent_is_wv)
    else:
        raise InputError(field, raw, "is not a quantity", f"a number in {hint}")
    if not _is_finite_number(quantity.magnitude):
        raise InputError(field, raw, "is not a finite number", f"a number in {hint}")
    if quantity.dimensionality not in accepted_dims:
        raise InputError(field, raw, "is in the wrong unit", hint)
    return quantity


def _is_finite_number(magnitude: object) -> bool:
    """A real, finite magnitude; pint's integer arithmetic can exceed any float ("535**5**3")."""
    if isinstance(magnitude, bool) or not isinstance(magnitude, (int, float)):
        return False
    try:
        return math.isfinite(float(magnitude))
    except OverflowError:
        return False


def _parse_text(field: str, raw: str, default_unit: str, hint: str, percent_is_wv: bool) -> pint.Quantity:
    text = raw.strip()
    if not text:
        raise InputError(field, "", "is empty", f"a number in {hint}")
    if _NUMBER.match(text):
        return Q_(float(text), default_unit)
    try:
        return _parse_spelling(field, raw, _ANNOTATION.sub("", text), default_unit, hint, percent_is_wv)
    except InputError:
        quantity = _parse_ucum(text)
        if quantity is None:
            raise
        return quantity


def _parse_ucum(text: str) -> pint.Quantity | None:
    """A number and a UCUM code ("140 meq/L", "290 mosm/kg{H2O}", "176 [lb_av]"), or None.

    Tried only when the text is not a spelling osmodose read before UCUM, so
    every such spelling reads exactly as it did, and the UCUM library is loaded
    only for text that needs it.
    """
    number = _LEADING_NUMBER.match(text)
    if number is None:
        return None
    code = text[number.end() :].strip()
    from osmodose.science.ucum import UcumError, ucum_unit  # noqa: PLC0415 (the library loads on first use)

    try:
        unit = ucum_unit(code)
    except UcumError:
        return None
    result: pint.Quantity = float(number.group()) * unit
    return result


def one(unit: str) -> pint.Quantity:
    """One of `unit`, written as pint reads it or as a UCUM code ("meq/L", "mosm/kg{H2O}").

    For units written by a file's header or by osmodose itself (never a
    user's free text): the audit's column units, `fields.conversion`.
    """
    try:
        return Q_(1.0, _ANNOTATION.sub("", unit))
    except _PARSE_ERRORS:
        from osmodose.science.ucum import ucum_unit  # noqa: PLC0415 (the library loads on first use)

        return ucum_unit(unit)


def _parse_spelling(
    field: str, raw: str, text: str, default_unit: str, hint: str, percent_is_wv: bool
) -> pint.Quantity:
    """The spellings read before UCUM: a number and a unit pint reads ("176 lb", "126mg/dL", "3% w/v")."""
    _check_shape(field, raw, text, default_unit, hint)
    text = _PERCENT_WV.sub(" percent_wv", text)
    if percent_is_wv:
        text = _BARE_PERCENT.sub(" percent_wv", text)
    powers = len(_POWER.findall(text))
    if powers > 1 or (powers == 1 and not _SMALL_POWER.search(text)):
        # pint evaluates powers with exact integers: "9**9**9" would run for minutes.
        # One power of at most two digits ("dm**3") is all a quantity needs.
        raise InputError(field, raw, "is not a quantity osmodose can read", hint)
    quick = _number_and_unit(text)
    if quick is not None:
        return quick
    try:
        parsed: Any = ureg.parse_expression(text)
    except _PARSE_ERRORS:
        raise InputError(field, raw, "is not a quantity osmodose can read", hint) from None
    if not isinstance(parsed, pint.Quantity):
        # A plain number written as an expression ("2*3") has no unit.
        raise InputError(field, raw, "is not a quantity osmodose can read", hint)
    return parsed


#: "number unit" with a unit of names joined by "/" (each with an optional small power):
#: what nearly every typed quantity and formulary value looks like ("20 % w/v" is
#: "20 percent_wv" by now).  A number with a leading zero ("007") or longer than 20
#: characters is left to pint, whose reading of it this must not second-guess.
_NUMBER_AND_UNIT = re.compile(
    r"([+-]?(?:[1-9]\d*(?:\.\d*)?|0(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?)\s*"
    r"([A-Za-zµμ_]+(?:\*\*\d)?(?:\s*/\s*[A-Za-zµμ_]+(?:\*\*\d)?)*)"
)
_INTEGER = re.compile(r"[+-]?\d+")


def _number_and_unit(text: str) -> pint.Quantity | None:
    """The quantity `ureg.parse_expression(text)` gives, with the unit parsed once per distinct unit text.

    pint tokenises and evaluates the whole expression on every call, looking each
    unit name up again (most of a formulary's load time); the number is read
    the way pint reads it (an int, or a float; a division makes it a float).
    None when the text is not of this simple shape or the unit is not one
    pint knows: `parse_expression` then reads it, and words its errors.
    """
    match = _NUMBER_AND_UNIT.fullmatch(text)
    if match is None or len(match.group(1)) > 20:
        return None
    unit = _unit(match.group(2))
    if unit is None:
        return None
    number = match.group(1)
    magnitude: float = int(number) if _INTEGER.fullmatch(number) else float(number)
    if "/" in match.group(2):
        magnitude = magnitude / 1  # pint divides by the denominator's quantity: a float
    return Q_(magnitude, unit)


@functools.lru_cache(maxsize=1024)
def _unit(text: str) -> pint.Unit | None:
    """A unit expression of names, "/" and powers, parsed once; None when pint cannot read it."""
    try:
        return ureg.parse_units(text)
    except _PARSE_ERRORS:
        return None


def _check_shape(field: str, raw: str, text: str, default_unit: str, hint: str) -> None:
    """One number, then a unit: pint would read "7,5 kg" as 75 kg, "1 500 mL" as 500 mL and "kg" as 1 kg."""
    if "," in text:
        raise InputError(field, raw, "has a comma", f"a number with a decimal point, e.g. 7.5 {default_unit}")
    number = _LEADING_NUMBER.match(text)
    if number is None:
        raise InputError(field, raw, "does not start with a number", f"a number in {hint}")
    if re.search(r"\d", _EXPONENT.sub("", text[number.end() :])):
        raise InputError(field, raw, "has more than one number", f"one number and a unit, e.g. 7.5 {default_unit}")


def as_osmolar(quantity: pint.Quantity, unit: str) -> pint.Quantity:
    """A molar figure read as osmolar when `unit` is osmolar: SI laboratories write mOsm/kg as mmol/kg.

    Anything else is returned as it is, so a wrong dimension still fails when converted.
    """
    target = dimension_of(unit)
    if quantity.dimensionality != target and "[osmotic_amount]" in target:
        swapped = quantity * _OSMOLE_PER_MOLE
        if swapped.dimensionality == target:
            return swapped
    return quantity


def is_bare_number(text: str) -> bool:
    """Whether `text` is a number alone ("5", "+5", "5e1"), the way a bare number is read."""
    return bool(_NUMBER.match(text.strip()))


def is_per_mass(quantity: pint.Quantity) -> bool:
    """True when the unit as written divides by a mass ("1 g/kg", "5 mL/kg").

    pint simplifies g/kg to a pure number, so the written unit, not the
    dimension, tells a per-kg dose from an absolute one.
    """
    for name, exponent in quantity.unit_items():
        if exponent.real < 0 and ureg.parse_units(name).dimensionality == dimension_of("kg"):
            return True
    return False
