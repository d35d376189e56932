"""UCUM unit codes (the Unified Code for Units of Measure), read into the package's one pint registry.

Laboratory systems and HL7 FHIR write units as case-sensitive UCUM codes:
`mmol/L`, `meq/L`, `mosm/kg{H2O}`, `[lb_av]`, `mm[Hg]`.  The grammar is the
library `ucumvert` (MIT), built from UCUM's own `ucum-essence.xml`: it knows
every prefix and atom, tells `mosm` (milli-osmole) from `mOsm` (not UCUM),
drops annotations in braces, and reads `.` (times), `/`, exponents (`m2`) and
factors (`/(24.h)`).  What each atom means is declared here, in `UCUM_ATOMS`,
as a unit of `units.ureg`: the library's own pint definitions are not used,
because they make the osmole a mole (osmodose keeps osmoles a dimension of
their own) and would add some 300 units to the one registry.

The library and its parser (lark) are imported on the first code read, never
at start-up: a command that reads no UCUM code pays nothing for them.
"""

from __future__ import annotations

import functools
from typing import Any

import pint

from osmodose.science.units import Q_

UCUM_SYSTEM = "http://unitsofmeasure.org"

#: Each UCUM atom osmodose reads, as the name of a unit in `units.ureg` (UCUM 2.2, ucum-essence.xml).
#: Atoms marked metric in UCUM take a prefix (`mmol`, `dL`, `mm[Hg]`); the others never do.
UCUM_ATOMS: dict[str, str] = {
    # mass
    "g": "gram",
    "[lb_av]": "pound",  # 7000 [gr] = 453.59237 g
    "[oz_av]": "ounce",  # [lb_av] / 16
    "[stone_av]": "stone",  # 14 [lb_av]
    # length
    "m": "meter",
    "[in_i]": "inch",  # 2.54 cm
    "[ft_i]": "foot",  # 12 [in_i]
    # volume
    "L": "liter",
    "l": "liter",
    # time
    "s": "second",
    "min": "minute",
    "h": "hour",
    "d": "day",
    "wk": "week",
    "mo": "month",  # mean Julian month, a_j / 12
    "a": "julian_year",  # the Julian year, 365.25 d
    # amount of substance
    "mol": "mole",
    "eq": "equivalent",  # osmodose's equivalent is the mole: monovalent ions only
    "osm": "osmole",  # UCUM makes it a mole; osmodose keeps it a dimension of its own
    # pressure
    "Pa": "pascal",
    "m[Hg]": "meter_Hg",
    "m[H2O]": "meter_H2O",
    # ratio
    "%": "percent",
}

#: UCUM's prefixes, as pint's prefix names.
UCUM_PREFIXES: dict[str, str] = {
    "Y": "yotta",
    "Z": "zetta",
    "E": "exa",
    "P": "peta",
    "T": "tera",
    "G": "giga",
    "M": "mega",
    "k": "kilo",
    "h": "hecto",
    "da": "deca",
    "d": "deci",
    "c": "centi",
    "m": "milli",
    "u": "micro",
    "n": "nano",
    "p": "pico",
    "f": "femto",
    "a": "atto",
    "z": "zepto",
    "y": "yocto",
}

#: Longest code read, and largest exponent and factor: bounds for text from a file.
MAX_CODE_LENGTH = 64
MAX_EXPONENT = 4
MAX_FACTOR_DIGITS = 6


class UcumError(ValueError):
    """A code that is not UCUM, or a UCUM unit osmodose does not read; `problem` says which."""

    def __init__(self, code: str, problem: str) -> None:
        super().__init__(f"{code!r} {problem}")
        self.code = code
        self.problem = problem


NOT_UCUM = "is not a UCUM unit code"
NOT_READ = "is a UCUM unit osmodose does not read"


@functools.cache
def _parser() -> Any:
    """ucumvert's case-sensitive UCUM parser, built once (about 0.2 s), on the first code read."""
    from ucumvert import get_ucum_parser  # noqa: PLC0415 (only when a UCUM code is read)

    return get_ucum_parser()


@functools.lru_cache(maxsize=1024)
def ucum_unit(code: str) -> pint.Quantity:
    """One of the unit `code` stands for, as a quantity of `units.ureg` (magnitude 1 unless a factor: `/(24.h)`).

    Raises `UcumError` for text that is not a UCUM code (`mOsm/kg`, `MMOL/L`) and
    for UCUM units osmodose does not read (`[degF]`, `10*3/uL`).
    """
    if not code or len(code) > MAX_CODE_LENGTH or not code.isascii() or any(c.isspace() for c in code):
        raise UcumError(code, NOT_UCUM)
    from lark.exceptions import LarkError  # noqa: PLC0415 (only when a UCUM code is read)

    try:
        tree = _parser().parse(code)
    except LarkError:
        raise UcumError(code, NOT_UCUM) from None
    return _value(tree, code)


def _value(node: Any, code: str) -> pint.Quantity:
    """The quantity of one node of ucumvert's parse tree (rules `main_term`, `term`, `component`, ...)."""
    if not hasattr(node, "data"):  # a token
        kind = node.type
        if kind == "ANNOTATION":  # "{H2O}": a note, no unit (UCUM: an annotation alone is unity)
            return Q_(1.0, "")
        raise UcumError(code, NOT_UCUM)
    rule, children = str(node.data), list(node.children)
    if rule == "simple_unit":
        return _simple_unit(children, code)
    if rule == "annotatable":
        base, exponent = children
        power = int(str(exponent))
        if abs(power) > MAX_EXPONENT:
            raise UcumError(code, NOT_READ)
        result: pint.Quantity = _value(base, code) ** power
        return result
    if rule == "component":  # a unit and its annotation: the annotation is dropped
        return _value(children[0], code)
    if rule == "main_term" and len(children) == 2:  # "/min"
        return 1 / _value(children[1], code)
    if rule == "main_term":
        return _value(children[0], code)
    if rule == "term":
        left, operator, right = children
        if str(operator) == ".":
            return _value(left, code) * _value(right, code)
        return _value(left, code) / _value(right, code)
    raise UcumError(code, NOT_UCUM)


def _simple_unit(children: list[Any], code: str) -> pint.Quantity:
    if len(children) == 2:
        prefix, atom = str(children[0]), str(children[1])
        if prefix not in UCUM_PREFIXES or atom not in UCUM_ATOMS:
            raise UcumError(code, NOT_READ)
        return Q_(1.0, UCUM_PREFIXES[prefix] + UCUM_ATOMS[atom])
    token = children[0]
    if token.type == "FACTOR":
        if len(str(token)) > MAX_FACTOR_DIGITS:
            raise UcumError(code, NOT_READ)
        return Q_(float(str(token)), "")
    atom = str(token)
    if atom not in UCUM_ATOMS:
        raise UcumError(code, NOT_READ)
    return Q_(1.0, UCUM_ATOMS[atom])


def ucum_quantity(value: float, code: str) -> pint.Quantity:
    """`value` of the UCUM unit `code` (a FHIR `valueQuantity`'s value and code)."""
    result: pint.Quantity = value * ucum_unit(code)
    return result
