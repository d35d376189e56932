"""Read a formulary file, validate it whole, and resolve it for the engine.

Every problem in a file is collected in one pass (`read_formulary` returns
them all) so the validator can list them together; `load_formulary` raises
them as one `FormularyProblems` whose message names the first.  Each problem
carries the file, the key path and the line.
"""

from __future__ import annotations

import hashlib
import re
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from pydantic import ValidationError

from osmodose.errors import FormularyError, FormularyProblems, InputError
from osmodose.formulary.demo import is_demo
from osmodose.formulary.file_errors import describe, key_path, salvage
from osmodose.formulary.file_model import AgentEntry, FormularyFile, LimitsTable
from osmodose.formulary.guard import MAX_DEPTH, guard, too_deep
from osmodose.formulary.limits import LIMIT_SPECS, ORDERED_PAIRS, REVERSED_PAIRS, display_unit
from osmodose.formulary.locate import key_lines, line_of
from osmodose.formulary.model import Agent, DoseKind, DoseLimit, Formulary, Limits
from osmodose.science.chemistry import SOLUTES, Solute, molar_mass
from osmodose.science.ranges import DOSE_CEILING, MAX_RATE_RANGE, SOLUTE_STRENGTH
from osmodose.science.units import is_per_mass, parse_quantity, ureg
from osmodose.storage.bounded import FORMULARY_MAX_BYTES, FileRefused, read_bounded

#: An explicit sodium or osmolarity may differ from the one derived from the
#: concentration by this fraction (label rounding) before the file is rejected.
COMPOSITION_TOLERANCE = 0.02
#: Osmoles an explicit potassium brings per mmol: potassium chloride dissociates into K+ and Cl-.
POTASSIUM_CHLORIDE_OSMOLES = 2.0
#: A strength printed in a label or an id this many times (or this fraction of) the concentration,
#: within the composition tolerance, is a slipped decimal point: the file is rejected.
DECIMAL_SLIPS = (10.0, 100.0, 1000.0)
#: A number in a label followed by "%": "Sodium chloride 23.4 % 30 mL vial" (or "0,9 %").
LABEL_PERCENT = re.compile(r"(\d+(?:[.,]\d+)?)\s*%")
#: A number in an agent id: "nacl-23.4" -> 23.4.
_ID_NUMBER = re.compile(r"\d+(?:\.\d+)?")

_TOML_POSITION = re.compile(r"\(at line (\d+), column \d+\)")
BYTE_ORDER_MARK = "\ufeff"
_DOSE_KINDS: dict[str, DoseKind] = {
    "[mass]": "g/kg",
    "[length] ** 3": "mL/kg",
    "[substance]": "mmol/kg",
    "[osmotic_amount]": "mOsm/kg",
}
_OSMOLALITY_DIM = ureg.parse_units("mOsm/kg").dimensionality


@dataclass
class ReadResult:
    """What reading a file gave: the formulary when it is usable, and every problem.

    `limits` and `agents` hold what could be resolved even when the file as a
    whole cannot be used (each agent with its 1-based place in the file), so
    the validator can still judge those parts; `readable` is False only when
    the file could not be opened at all.
    """

    path: Path
    formulary: Formulary | None
    problems: list[FormularyError] = field(default_factory=list)
    data: dict[str, Any] | None = None
    text: str | None = None
    limits: Limits | None = None
    agents: tuple[tuple[int, Agent], ...] = ()
    readable: bool = True


class _Collector:
    """Collects problems with their lines while one file is resolved."""

    def __init__(self, path: Path, text: str) -> None:
        self.path = path
        self.lines = key_lines(text)
        self.problems: list[FormularyError] = []

    def add(self, key_path: str, problem: str) -> None:
        self.problems.append(FormularyError(self.path, problem, key_path, line_of(self.lines, key_path)))

    def quantity(self, key_path: str, raw: str, default_unit: str, accepted: tuple[str, ...], **kw: Any) -> Any:
        try:
            return parse_quantity(key_path, raw, default_unit, accepted, **kw)
        except InputError as error:
            detail = f"{raw!r} {error.problem}"
            if error.accepted:
                detail += f" (accepted: {error.accepted})"
            self.add(key_path, detail)
            return None


def read_formulary(path: Path | str) -> ReadResult:
    """Read, validate and resolve `path`; never raises for a bad file."""
    path = Path(path)
    try:
        raw = read_bounded(path, FORMULARY_MAX_BYTES)
    except FileRefused as refused:
        return ReadResult(path, None, [FormularyError(path, refused.problem)], readable=False)
    except OSError as error:
        reason = error.strerror or type(error).__name__
        return ReadResult(path, None, [FormularyError(path, f"cannot be read: {reason}")], readable=False)
    digest = hashlib.sha256(raw).hexdigest()
    try:
        text = raw.decode("utf-8").removeprefix(BYTE_ORDER_MARK)  # a BOM some editors write: accepted
    except UnicodeDecodeError:
        return ReadResult(path, None, [FormularyError(path, "is not UTF-8 text")])
    if (found := guard(text)) is not None:
        return ReadResult(path, None, [FormularyError(path, found[0], None, found[1])], text=text)
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as error:
        message = str(error)
        match = _TOML_POSITION.search(message)
        line = int(match.group(1)) if match else None
        problem = "is not valid TOML: " + _TOML_POSITION.sub("", message).strip()
        return ReadResult(path, None, [FormularyError(path, problem, None, line)], text=text)
    except (RecursionError, ValueError):  # beyond what the scan catches; never a traceback
        problem = "cannot be read as a formulary: nested or sized beyond any formulary (see docs/file-limits.md)"
        return ReadResult(path, None, [FormularyError(path, problem)], text=text)
    if too_deep(data):
        problem = f"nests arrays or tables more than {MAX_DEPTH} deep: no formulary needs that"
        return ReadResult(path, None, [FormularyError(path, problem)], text=text)
    collector = _Collector(path, text)
    model: FormularyFile | None = None
    try:
        model = FormularyFile.model_validate(data)
    except ValidationError as error:
        items = error.errors()
        for item in items:
            collector.add(key_path(item["loc"]), describe(item))
        limits_table, entries = salvage(data, [item["loc"] for item in items])
    else:
        limits_table, entries = model.limits, list(enumerate(model.agents, start=1))
    first = len(collector.problems)
    reported = {problem.key_path for problem in collector.problems}
    limits = _resolve_limits(limits_table, collector)
    agents = _resolve_agents(entries, collector)
    # A key that salvage left out is not reported a second time (as missing).
    collector.problems[first:] = [p for p in collector.problems[first:] if p.key_path not in reported]
    if model is None or collector.problems:
        return ReadResult(path, None, collector.problems, data, text, limits, agents)
    formulary = Formulary(
        name=model.formulary.name,
        version=model.formulary.version,
        sha256=digest,
        path=str(path),
        demo=is_demo(digest),
        settings=model.settings,
        limits=limits,
        agents=tuple(agent for _, agent in agents),
    )
    return ReadResult(path, formulary, [], data, text, limits, agents)


def load_formulary(path: Path | str) -> Formulary:
    """The resolved formulary at `path`, or `FormularyProblems` naming every problem."""
    result = read_formulary(path)
    if result.formulary is None:
        raise FormularyProblems(result.problems)
    return result.formulary


def _resolve_agents(entries: list[tuple[int, AgentEntry]], out: _Collector) -> tuple[tuple[int, Agent], ...]:
    agents: list[tuple[int, Agent]] = []
    seen: dict[str, int] = {}
    coded: dict[str, int] = {}
    for index, entry in entries:
        where = f"agents[{index}]"
        if entry.id in seen:
            out.add(f"{where}.id", f"{entry.id!r} is already the id of agents[{seen[entry.id]}]")
        seen.setdefault(entry.id, index)
        for number, code in enumerate(entry.codes, start=1):
            system, bar, value = code.partition("|")
            if not (bar and system.strip() and value.strip()) or "|" in value or code != code.strip():
                out.add(
                    f"{where}.codes[{number}]", f'{code!r} is not "system|code" (e.g. "http://example.org/stock|NACL3")'
                )
            elif code in coded and coded[code] != index:
                out.add(
                    f"{where}.codes[{number}]", f"{code!r} already names agents[{coded[code]}]: one code, one agent"
                )
            coded.setdefault(code, index)
        agent = _resolve_agent(entry, where, out)
        if agent is not None:
            agents.append((index, agent))
    return tuple(agents)


def _resolve_limits(table: LimitsTable, out: _Collector) -> Limits:
    values: dict[str, float | None] = {}
    from_file: set[str] = set()
    written = table.model_dump()
    for name, spec in LIMIT_SPECS.items():
        raw = written[name]
        if raw is None:
            values[name] = spec.default
            continue
        quantity = out.quantity(f"limits.{name}", raw, spec.unit, spec.accepted)
        if quantity is None:
            values[name] = spec.default
            continue
        if quantity.check("[substance]/[mass]") and ureg.parse_units(spec.unit).dimensionality == _OSMOLALITY_DIM:
            # SI laboratories write osmolality in mmol/kg: the same figure in mOsm/kg.
            quantity = ureg.Quantity(quantity.m_as("mmol/kg"), "mOsm/kg")
        value = float(quantity.to(spec.unit).magnitude)
        if value < 0:
            out.add(f"limits.{name}", f"{raw!r} is negative (accepted: a value of 0 or more)")
        elif spec.plausible is not None and not spec.plausible[0] <= value <= spec.plausible[1]:
            lowest, highest = spec.plausible
            out.add(
                f"limits.{name}",
                f"{raw!r} is outside the plausible range for this limit "
                f"(accepted: {lowest:g} to {highest:g} {display_unit(spec.unit)})",
            )
        values[name] = value
        from_file.add(name)
    for warn, refuse in ORDERED_PAIRS:
        low, high = values[warn], values[refuse]
        if low is not None and high is not None and low > high:
            out.add(f"limits.{warn}", f"{low:g} {LIMIT_SPECS[warn].unit} is above {refuse} ({high:g})")
    for warn, refuse in REVERSED_PAIRS:
        high, low = values[warn], values[refuse]
        if low is not None and high is not None and high < low:
            out.add(f"limits.{warn}", f"{high:g} {LIMIT_SPECS[warn].unit} is below {refuse} ({low:g})")
    return Limits(values=values, from_file=frozenset(from_file))


def _resolve_agent(entry: AgentEntry, where: str, out: _Collector) -> Agent | None:
    solute = SOLUTES[entry.solute]
    before = len(out.problems)
    grams: float | None = None
    derived_na = derived_osm = None
    if solute.molar_mass_g_per_mol is None:
        if entry.concentration is not None:
            out.add(
                f"{where}.concentration",
                "a mixed fluid has no single concentration: give sodium, potassium and osmolarity",
            )
        for key in ("sodium", "osmolarity"):
            if getattr(entry, key) is None:
                out.add(f"{where}.{key}", "is required for a mixed fluid")
    elif entry.concentration is None:
        out.add(f"{where}.concentration", "is required but missing")
    else:
        conc = out.quantity(f"{where}.concentration", entry.concentration, "g/L", ("g/L", "mmol/L"), percent_is_wv=True)
        if conc is not None:
            mass = conc if conc.check("[mass]/[volume]") else conc * molar_mass(entry.solute)
            grams = float(mass.m_as("g/L"))
            percent = float(mass.m_as("percent_wv"))
            strength = SOLUTE_STRENGTH.get(entry.solute)
            if grams <= 0:
                out.add(f"{where}.concentration", f"{entry.concentration!r} is not above zero")
            elif strength is not None and not strength.contains(percent):
                out.add(
                    f"{where}.concentration",
                    f"{entry.concentration!r} is {percent:.4g} % w/v, outside the plausible range "
                    f"for {entry.solute} (accepted: {strength.describe()})",
                )
            elif (slip := strength_slip(entry, percent)) is not None:
                out.add(f"{where}.concentration", slip)
            moles = float((mass / molar_mass(entry.solute)).m_as("mmol/L"))
            derived_na = moles * solute.sodium_per_mole
            derived_osm = moles * solute.osmoles_per_mole
    sodium_problems = len(out.problems)
    sodium = _explicit(entry.sodium, f"{where}.sodium", "mmol/L", ("mmol/L",), derived_na, out)
    potassium = _explicit(entry.potassium, f"{where}.potassium", "mmol/L", ("mmol/L",), None, out)
    label_sodium = sodium if entry.sodium is not None and len(out.problems) == sodium_problems else None
    checked_osm = derived_osmolarity(solute, derived_osm, None, potassium)
    osmolarity = _explicit(entry.osmolarity, f"{where}.osmolarity", "mOsm/L", ("mOsm/L",), checked_osm, out)
    if entry.osmolarity is None:
        osmolarity = derived_osmolarity(solute, derived_osm, label_sodium, potassium)
    presentations: list[float] = []
    for number, raw in enumerate(entry.presentations, start=1):
        size = out.quantity(f"{where}.presentations[{number}]", raw, "mL", ("mL",))
        if size is not None:
            if size.m_as("mL") <= 0:
                out.add(f"{where}.presentations[{number}]", f"{raw!r} is not above zero")
            presentations.append(float(size.m_as("mL")))
    dose_warn = _dose_limit(entry.dose_warn, f"{where}.dose_warn", out)
    dose_refuse = _dose_limit(entry.dose_refuse, f"{where}.dose_refuse", out)
    for key, limit in (("dose_warn", dose_warn), ("dose_refuse", dose_refuse)):
        # A limit the agent's figures can never reach would never fire: say so instead.
        if limit is None:
            continue
        if limit.kind == "g/kg" and solute.molar_mass_g_per_mol is None:
            out.add(f"{where}.{key}", f"{limit.text!r} is in g/kg, but a mixed fluid has no single solute to weigh")
        elif limit.kind == "mmol/kg" and sodium is not None and sodium <= 0:
            out.add(f"{where}.{key}", f"{limit.text!r} is in mmol/kg of sodium, but this agent has no sodium")
        elif len(out.problems) > before:
            continue  # a dose limit is only judged against a composition that loaded
        elif (ceiling := dose_ceiling_problem(limit, entry.solute, grams, sodium, osmolarity)) is not None:
            out.add(f"{where}.{key}", ceiling)
    if dose_warn and dose_refuse:
        if dose_warn.kind != dose_refuse.kind:
            out.add(f"{where}.dose_refuse", f"is in {dose_refuse.kind} but dose_warn is in {dose_warn.kind}")
        elif dose_warn.value > dose_refuse.value:
            out.add(f"{where}.dose_warn", f"{dose_warn.text!r} is above dose_refuse ({dose_refuse.text!r})")
    max_rate = None
    if entry.max_rate is not None:
        rate = out.quantity(f"{where}.max_rate", entry.max_rate, "mL/h", ("mL/h",))
        max_rate = None if rate is None else float(rate.m_as("mL/h"))
        if max_rate is not None and not MAX_RATE_RANGE.low <= max_rate <= MAX_RATE_RANGE.high:
            out.add(
                f"{where}.max_rate",
                f"{entry.max_rate!r} is outside the plausible range for a rate (accepted: {MAX_RATE_RANGE.describe()})",
            )
    if len(out.problems) > before:
        return None
    return Agent(
        id=entry.id,
        label=entry.label,
        solute=entry.solute,
        route=entry.route,
        concentration_text=entry.concentration,
        solute_g_per_l=grams,
        sodium_mmol_l=sodium if sodium is not None else 0.0,
        potassium_mmol_l=potassium if potassium is not None else 0.0,
        osmolarity_mosm_l=osmolarity if osmolarity is not None else 0.0,
        presentations_ml=tuple(presentations),
        dose_warn=dose_warn,
        dose_refuse=dose_refuse,
        max_rate_ml_h=max_rate,
        adult_only=entry.adult_only,
        dose_weight=entry.dose_weight,
        codes=tuple(entry.codes),
    )


def _explicit(
    raw: str | None, key: str, unit: str, accepted: tuple[str, ...], derived: float | None, out: _Collector
) -> float | None:
    """An explicit composition value, cross-checked against the derived one."""
    if raw is None:
        return derived
    quantity = out.quantity(key, raw, unit, accepted)
    if quantity is None:
        return derived
    value = float(quantity.m_as(unit))
    if value < 0:
        out.add(key, f"{raw!r} is negative")
    if derived is not None:
        differs = abs(value - derived) > COMPOSITION_TOLERANCE * derived if derived > 0 else value > 0
        if differs:
            out.add(
                key,
                f"{raw!r} disagrees with the concentration, which gives {derived:.0f} {unit} "
                f"(more than {COMPOSITION_TOLERANCE:.0%} apart)",
            )
    return value


def _dose_limit(raw: str | None, key: str, out: _Collector) -> DoseLimit | None:
    if raw is None:
        return None
    quantity = out.quantity(key, raw, "g/kg", ("g/kg", "mL/kg", "mmol/kg", "mOsm/kg"))
    if quantity is None:
        return None
    if not is_per_mass(quantity):
        out.add(key, f"{raw!r} is not a dose per kg (accepted: g/kg, mL/kg, mmol/kg or mOsm/kg)")
        return None
    absolute = (quantity * ureg.kilogram).to_reduced_units()
    kind = _DOSE_KINDS.get(str(absolute.dimensionality))
    if kind is None:
        out.add(key, f"{raw!r} is in the wrong unit (accepted: g/kg, mL/kg, mmol/kg or mOsm/kg)")
        return None
    value = float(quantity.m_as(kind))
    return DoseLimit(value=value, kind=kind, text=raw)


def derived_osmolarity(
    solute: Solute, from_concentration: float | None, label_sodium: float | None, potassium: float | None
) -> float | None:
    """The osmolarity a single-solute agent's figures give, mOsm/L.

    With `label_sodium` (written, and within tolerance of the concentration's)
    the osmolarity follows it, so one agent's two figures never disagree
    (23.4 % labelled 4 mEq/mL: 8000 mOsm/L, not the 8008 that 234 g/L gives);
    the loader uses that figure when the file writes no osmolarity, and checks
    a written one against the concentration's.  An explicit potassium is
    counted as potassium chloride (K+ and Cl-): 0.9 % sodium chloride with
    20 mmol/L KCl is 308 + 40 = 348 mOsm/L.
    """
    if from_concentration is None:
        return None
    osmolarity = from_concentration
    if label_sodium is not None and solute.sodium_per_mole > 0:
        osmolarity = label_sodium / solute.sodium_per_mole * solute.osmoles_per_mole
    if potassium:
        osmolarity += POTASSIUM_CHLORIDE_OSMOLES * potassium
    return osmolarity


def strength_slip(entry: AgentEntry, percent: float) -> str | None:
    """A concentration a slipped decimal point away from the strength printed in the label or the id.

    Only when nothing written matches it (within the composition tolerance) and
    something written is 10, 100 or 1000 times it, or that fraction of it:
    "2.34% w/v" for a vial labelled "23.4 %" or named "nacl-23.4".
    """
    written = [("label", float(n.replace(",", "."))) for n in LABEL_PERCENT.findall(entry.label)]
    written += [("id", float(n)) for n in _ID_NUMBER.findall(entry.id)]
    if not written or any(_close(value, percent) for _, value in written):
        return None
    for where, value in written:
        for factor in DECIMAL_SLIPS:
            if _close(value, percent * factor) or _close(value * factor, percent):
                return (
                    f"{entry.concentration!r} is {percent:.4g} % w/v, but the {where} says {value:g} % "
                    f"({factor:g} times apart: a slipped decimal point?); correct the concentration or the {where}"
                )
    return None


def _close(value: float, target: float) -> bool:
    return target > 0 and abs(value - target) <= COMPOSITION_TOLERANCE * target


def dose_ceiling_problem(
    limit: DoseLimit, solute: str, grams_per_l: float | None, sodium: float | None, osmolarity: float | None
) -> str | None:
    """A per-kg dose limit above the plausible ceiling for its solute (`ranges.DOSE_CEILING`), or None.

    The limit is turned into mOsm/kg with the agent's composition, so a limit
    in g/kg, mL/kg, mmol/kg or mOsm/kg is judged alike; the accepted maximum is
    given back in the limit's own unit.
    """
    ceiling = DOSE_CEILING.get(solute)
    if ceiling is None or not osmolarity:
        return None
    per_unit = {  # mOsm per one of the limit's unit, per kg
        "g/kg": osmolarity / grams_per_l if grams_per_l else None,
        "mL/kg": osmolarity / 1000.0,
        "mmol/kg": osmolarity / sodium if sodium else None,
        "mOsm/kg": 1.0,
    }[limit.kind]
    if per_unit is None or limit.value * per_unit <= ceiling.ceiling_mosm_per_kg * (1 + 1e-9):
        return None
    most = ceiling.ceiling_mosm_per_kg / per_unit
    return (
        f"{limit.text!r} is above {ceiling.multiple:g} times the largest published dose of {solute}, "
        f"{ceiling.published} (accepted: up to {most:.3g} {limit.kind})"
    )
