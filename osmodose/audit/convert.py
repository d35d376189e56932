"""Text columns of a chunk -> the engine's columns, and the reason each bad row is bad.

This is `parse_check_request` and the checks `run_check` makes before the
engine, run on whole columns.  The stages come in the order those functions
meet them, and each bad row keeps the first reason it meets, so a row is
reported with the words a check of the same typed text would print.  Ranges
come from `osmodose.science.ranges`, units from the header (see `columns`), molar
masses from `osmodose.science.chemistry`; doses are read by `inputs.parse_dose` once
per distinct unit.  Messages are only built for the rows that fail.
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
import pyarrow as pa

from osmodose.audit.cells import ChunkCells, encode
from osmodose.audit.columns import ORDER_COLUMNS, Header
from osmodose.audit.reader import RawChunk, TextColumn
from osmodose.case.fields import FIELDS, LAB_FIELDS, URINE_FIELDS, CaseField
from osmodose.case.inputs import (
    URINE_SODIUM_ACCEPTED,
    URINE_VOLUME_ACCEPTED,
    DoseRequest,
    parse_dose,
    target_change,
    target_sodium_error,
)
from osmodose.check.engine import DOSE_UNITS, DOSE_WEIGHTS, Cases
from osmodose.check.patient_figures import dose_weight_height_error, dose_weight_problems
from osmodose.check.run import dose_misfit, height_required_error
from osmodose.errors import InputError
from osmodose.formulary.model import Formulary
from osmodose.science.choices import TARGET_MODES

#: A dose cell "number unit" whose unit is letters and slashes reads as number x (1 unit);
#: anything else is handed whole to `parse_dose`.
_DOSE_SPLIT = re.compile(r"\s*([+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?)\s*([A-Za-zµμ][A-Za-zµμ/ ]*?)\s*")
_ONE_ORDER = "exactly one of dose, volume, target-rise or target-sodium"
OUTSIDE = "is outside the plausible range"
#: Each order column's name by its code (0: no order), as a row's `mode`.
_MODES = np.asarray(["", *ORDER_COLUMNS])
_UNIT_CODES = {unit: code for code, unit in enumerate(DOSE_UNITS)}
#: Every lab column a row may have, including those read into another (BUN into urea), in table order.
LAB_FIELDS_TYPED = tuple(f for f in FIELDS.values() if f.group == "labs")


@dataclass(frozen=True)
class Converted:
    """One chunk in canonical units (NaN where not given) and the reasons of its bad rows."""

    reasons: dict[int, str]
    columns: dict[str, np.ndarray]
    #: Each row's agent cell as a code into `agent_ids`, the chunk's distinct agent cells (stripped).
    agent_codes: np.ndarray
    agent_ids: list[str]
    agent_index: np.ndarray
    mode: np.ndarray
    #: Index of each row's dose unit in `engine.DOSE_UNITS` (0: none).
    dose_unit_code: np.ndarray
    dose_amount: np.ndarray
    dose_per_kg: np.ndarray
    #: The cell of a column as check would have been typed it: (column, position) -> text.
    shown: Callable[[str, int], str]
    use_watson: np.ndarray
    line: np.ndarray
    raised_icp: np.ndarray | None = None

    def good(self) -> np.ndarray:
        mask = np.ones(len(self.mode), dtype=bool)
        mask[list(self.reasons)] = False
        return mask

    def cases(self, rows: np.ndarray | None = None) -> Cases:
        """The engine's batch for these rows (all by default), built as `check.cases_from_request` builds one."""
        take = slice(None) if rows is None else rows
        c = {name: values[take] for name, values in self.columns.items()}
        return Cases(
            weight_kg=c["weight"],
            age_years=c["age"],
            male=c["male"].astype(bool),
            height_cm=c["height"],
            labs={field.key: c[field.key] for field in LAB_FIELDS},
            agent_index=self.agent_index[take],
            dose_unit=self.dose_unit_code[take],
            dose_amount=self.dose_amount[take],
            dose_per_kg=self.dose_per_kg[take],
            duration_min=c["duration"],
            use_watson=self.use_watson[take],
            raised_icp=None if self.raised_icp is None else self.raised_icp[take],
            urine={field.key: c[field.key] for field in URINE_FIELDS},
        )

    def dose_text(self, row: int) -> str:
        """The order as typed (for messages only, so read when a message needs it)."""
        return self.shown(str(self.mode[row]), row)

    def dose_request(self, row: int, formulary: Formulary) -> DoseRequest:
        """The DoseRequest a check would have made for this row (for the message of a failed order)."""
        duration = float(self.columns["duration"][row])
        return DoseRequest.model_validate(
            {
                "agent_id": formulary.agents[int(self.agent_index[row])].id,
                "mode": str(self.mode[row]),
                "amount": float(self.dose_amount[row]),
                "unit": DOSE_UNITS[int(self.dose_unit_code[row])],
                "per_kg": bool(self.dose_per_kg[row]),
                "duration_min": None if math.isnan(duration) else duration,
                "text": self.dose_text(row),
            }
        )


class _Reasons:
    """The first reason of each bad row, in the order the stages are added."""

    def __init__(self, n: int, known: dict[int, str]) -> None:
        self.bad = np.zeros(n, dtype=bool)
        self.reasons = dict(known)
        self.bad[list(known)] = True

    def add(self, mask: np.ndarray, reason: Callable[[int], str]) -> None:
        new = np.flatnonzero(mask & ~self.bad)
        for row in new.tolist():
            self.reasons[row] = reason(row)
        self.bad[new] = True


def _error(field: str, value: object, problem: str, accepted: str | None = None) -> str:
    return str(InputError(field, value, problem, accepted))


def _both(field: CaseField, chunk: ChunkCells) -> Callable[[int], str]:
    """The message for a row that gives a lab twice, in two forms (BUN and urea), as check words it."""
    problem = f"cannot be given together with {field.into}"
    accepted = f"{field.into} or {field.key}, not both"
    return lambda i: _error(field.key, chunk.shown(field.key, i), problem, accepted)


def convert(header: Header, raw: RawChunk, formulary: Formulary) -> Converted:
    """Read one chunk the way `parse_check_request` + `run_check` read one request."""
    chunk, n = ChunkCells(header, raw), len(raw)
    reasons = _Reasons(n, raw.problems)
    values: dict[str, np.ndarray] = {}
    given: dict[str, np.ndarray] = {}

    def number(name: str, required: bool = False, active: np.ndarray | None = None) -> None:
        """Read a number column, judging its plausible range in the unit the range is written in."""
        read = chunk.number(name)
        g, unreadable = read.given, read.unreadable
        if active is not None:
            g = g & active
            unreadable = {i: reason for i, reason in unreadable.items() if active[i]}
        values[name], given[name] = read.engine, g
        if required:
            reasons.add(~g, lambda i: _error(name, None, "is required"))
        failed = np.zeros(n, dtype=bool)
        failed[list(unreadable)] = True
        reasons.add(failed, unreadable.__getitem__)
        g = g & ~failed
        bounds = FIELDS[name].bounds
        w = read.judged
        with np.errstate(invalid="ignore"):
            inside = (bounds.low <= w) & (w <= bounds.high)
        reasons.add(g & ~inside, lambda i: _error(name, chunk.shown(name, i), OUTSIDE, bounds.describe()))

    def choice(name: str) -> tuple[np.ndarray, np.ndarray]:
        """(codes, distinct lowered values): a choice column takes a few values, judged once each."""
        field = FIELDS[name]
        options = field.choice
        if options is None:
            raise ValueError(f"{name} is not a choice")
        codes, distinct = encode(raw.cells[name]) if name in header else (np.zeros(n, np.int64), [""])
        lowered = np.asarray([d.lower() for d in distinct], dtype=str)
        if field.required:
            reasons.add((lowered == "")[codes], lambda i: _error(name, None, "is required"))
        bad = (lowered != "") & ~np.isin(lowered, options.values)
        problem = f"is not a {options.noun} osmodose knows"
        reasons.add(bad[codes], lambda i: _error(name, raw.cells[name][i].strip(), problem, options.accepted()))
        return codes, lowered

    def chosen(name: str, value: str) -> np.ndarray:
        codes, lowered = choice(name)
        return (lowered == value)[codes]

    # The patient, then the labs, in the field table's order: the order `parse_check_request` reads them.
    number("weight", required=True)
    number("age", required=True)
    male = chosen("sex", "male")
    number("height")
    raised_icp = chosen("raised-icp", "yes")
    for field in LAB_FIELDS_TYPED:
        if field.into is not None:
            reasons.add(chunk.number(field.key).given & chunk.number(field.into).given, _both(field, chunk))
        number(field.key, required=field.required)
    _urine(chunk, number, given, reasons)
    line_codes, lines = choice("line")
    line = lines[line_codes]
    method_codes, methods = choice("tbw-method")
    use_watson = (np.where(methods == "", formulary.settings.tbw_method, methods) == "watson")[method_codes]

    agent_codes, agent_ids = encode(raw.cells["agent"]) if "agent" in header else (np.zeros(n, np.int64), [""])
    has_agent = np.asarray([a != "" for a in agent_ids], dtype=bool)[agent_codes]
    orders = {name: chunk.given(name) for name in ORDER_COLUMNS}
    count = np.asarray(np.sum([orders[name] for name in ORDER_COLUMNS], axis=0, dtype=np.int64))

    def nth_order(i: int, nth: int) -> str:
        return [name for name in ORDER_COLUMNS if orders[name][i]][nth]

    reasons.add(
        ~has_agent & (count > 0),
        lambda i: _error(nth_order(i, 0), chunk.shown(nth_order(i, 0), i), "needs an agent", "--agent ID"),
    )
    reasons.add(
        has_agent & (count == 0), lambda i: _error("agent", agent_ids[agent_codes[i]], "needs a dose", _ONE_ORDER)
    )
    reasons.add(
        count > 1,
        lambda i: _error(
            nth_order(i, 1),
            chunk.shown(nth_order(i, 1), i),
            "cannot be given together with " + nth_order(i, 0),
            _ONE_ORDER,
        ),
    )
    active = has_agent & (count == 1) & ~reasons.bad
    number("duration", active=active)
    mode_code = np.zeros(n, dtype=np.int8)  # 0: no order, else 1 + its place in ORDER_COLUMNS
    for code, name in enumerate(ORDER_COLUMNS, start=1):
        mode_code[active & orders[name]] = code
    is_mode = {name: mode_code == code for code, name in enumerate(ORDER_COLUMNS, start=1)}
    mode = _MODES[mode_code]
    unit_code = np.zeros(n, dtype=np.int8)  # into DOSE_UNITS
    unit_code[is_mode["volume"]] = DOSE_UNITS.index("mL")
    for name in TARGET_MODES:
        unit_code[is_mode[name]] = DOSE_UNITS.index("mmol/L")
    number("volume", active=is_mode["volume"])
    rise_text = is_mode["target-rise"]
    rise_values = chunk.number("target-rise").engine  # unreadable cells are NaN, never zero
    zero = rise_text & (rise_values == 0)
    rise_accepted = "a change from -30 to 30 mmol/L, not 0"
    reasons.add(
        zero,
        lambda i: _error("target-rise", chunk.shown("target-rise", i), "is zero", rise_accepted),
    )
    number("target-rise", active=rise_text)
    target_text = is_mode["target-sodium"]
    number("target-sodium", active=target_text)
    serum = values["sodium"]
    change = target_change(values["target-sodium"], serum)
    bounds = FIELDS["target-rise"].bounds
    with np.errstate(invalid="ignore"):
        target_bad = (
            target_text & given["target-sodium"] & ((change == 0) | (change < bounds.low) | (change > bounds.high))
        )

    def target_reason(i: int) -> str:
        shown = chunk.shown("target-sodium", i)
        return str(target_sodium_error(shown, float(values["target-sodium"][i]), float(serum[i])))

    reasons.add(target_bad, target_reason)
    amount = np.select(
        [is_mode["volume"], rise_text, target_text],
        [values["volume"], values["target-rise"], change],
        default=np.nan,
    )
    per_kg = np.zeros(n, dtype=bool)
    _read_doses(chunk, np.flatnonzero(is_mode["dose"] & ~reasons.bad), reasons, amount, unit_code, per_kg)

    agent_index = _agent_index(formulary, agent_codes, agent_ids, active & ~reasons.bad, reasons)
    _misfits(formulary, agent_index, mode, unit_code, amount, per_kg, chunk.order_text, reasons)
    height_given = given["height"]
    reasons.add(use_watson & ~height_given, lambda i: str(height_required_error()))
    _dose_weights(formulary, agent_index, np.where(height_given, values["height"], np.nan), values["age"], reasons)

    columns = {**values, "male": male.astype(float)}
    for field in LAB_FIELDS_TYPED:
        if field.into is not None:
            columns[field.into] = np.where(given[field.into], values[field.into], values[field.key])
    columns["duration"] = np.where(given["duration"], values["duration"], np.nan)
    return Converted(
        reasons=reasons.reasons,
        columns=columns,
        agent_codes=agent_codes,
        agent_ids=agent_ids,
        agent_index=agent_index,
        mode=mode,
        dose_unit_code=unit_code,
        dose_amount=amount,
        dose_per_kg=per_kg,
        shown=chunk.shown,
        use_watson=use_watson,
        line=line,
        raised_icp=raised_icp,
    )


def _dose_weights(
    formulary: Formulary, agent_index: np.ndarray, height: np.ndarray, age: np.ndarray, reasons: _Reasons
) -> None:
    """Orders dosed on ideal or adjusted weight with no height: check's own error (`run.dose_weight_error`)."""
    codes = np.asarray([*(DOSE_WEIGHTS.index(a.dose_weight) for a in formulary.agents), 0], dtype=np.int8)
    safe = np.where(agent_index >= 0, agent_index, len(formulary.agents))
    missing = dose_weight_problems(codes[safe], agent_index >= 0, height, age, formulary.settings.adult_age_years)

    def message(i: int) -> str:
        agent = formulary.agents[int(agent_index[i])]
        return str(dose_weight_height_error(agent.id, agent.dose_weight))

    reasons.add(missing, message)


def _urine(chunk: ChunkCells, number: Callable[[str], None], given: dict[str, np.ndarray], reasons: _Reasons) -> None:
    """The urine columns, read and paired as `inputs.parse_urine` reads and pairs them."""
    for field in URINE_FIELDS:
        number(field.key)
    volume, sodium, potassium = (given[field.key] for field in URINE_FIELDS)

    def alone(key: str) -> Callable[[int], str]:
        return lambda i: _error(key, chunk.shown(key, i), "needs a urine volume", URINE_VOLUME_ACCEPTED)

    reasons.add(sodium & ~volume, alone("urine-sodium"))
    reasons.add(potassium & ~volume & ~sodium, alone("urine-potassium"))
    message = _error("urine-sodium", None, "is required with a urine volume", URINE_SODIUM_ACCEPTED)
    reasons.add(volume & ~sodium, lambda i: message)


def _read_doses(
    chunk: ChunkCells,
    rows: np.ndarray,
    reasons: _Reasons,
    amount: np.ndarray,
    unit_code: np.ndarray,
    per_kg: np.ndarray,
) -> None:
    """Dose cells through `parse_dose`: once per distinct unit, or per distinct text when odd."""
    if not len(rows):
        return
    taken = pa.array(rows)
    codes, plain = encode(TextColumn(chunk.raw.cells["dose"].array.take(taken)))
    if "dose-unit" in chunk.header:
        # The dose as check is typed it: the cell, then the unit cell beside it (see `ChunkCells.shown`).
        unit_codes, unit_texts = encode(TextColumn(chunk.raw.cells["dose-unit"].array.take(taken)))
        pairs, codes = np.unique(codes * len(unit_texts) + unit_codes, return_inverse=True)
        codes = codes.reshape(-1)
        split = [divmod(pair, len(unit_texts)) for pair in pairs.tolist()]
        distinct = [f"{plain[d]} {unit_texts[u]}" if unit_texts[u] else plain[d] for d, u in split]
    else:
        unit = chunk.header.columns["dose"].unit
        distinct = [f"{c} {unit}" if unit and c else c for c in plain]
    units: dict[str, DoseRequest | InputError] = {}
    read: list[tuple[float, str, bool] | str] = []
    for text in distinct:
        match = _DOSE_SPLIT.fullmatch(text)
        probe: DoseRequest | InputError
        if match is not None:
            unit = match.group(2)
            if unit not in units:
                units[unit] = _parse(f"1 {unit}")
            probe = units[unit]
            number = float(match.group(1))
            # Not 0, negative or "1e999" (infinite): parse_dose gives those check's own words.
            if isinstance(probe, DoseRequest) and 0 < number < math.inf:
                read.append((number * probe.amount, probe.unit, probe.per_kg))
                continue
        probe = _parse(text)
        if isinstance(probe, InputError):
            read.append(str(InputError("dose", text, probe.problem, probe.accepted)))
        else:
            read.append((probe.amount, probe.unit, probe.per_kg))
    if not read:
        return
    failed = np.asarray([isinstance(entry, str) for entry in read], dtype=bool)
    mask = np.zeros(len(amount), dtype=bool)
    mask[rows[failed[codes]]] = True
    reasons.add(mask, lambda i: str(read[codes[np.searchsorted(rows, i)]]))
    entries = [(math.nan, "", False) if isinstance(entry, str) else entry for entry in read]
    amount[rows] = np.asarray([e[0] for e in entries], dtype=float)[codes]
    unit_code[rows] = np.asarray([_UNIT_CODES.get(e[1], 0) for e in entries], dtype=unit_code.dtype)[codes]
    per_kg[rows] = np.asarray([e[2] for e in entries], dtype=bool)[codes]


def _parse(text: str) -> DoseRequest | InputError:
    try:
        return parse_dose("", text)
    except InputError as error:
        return error


def _agent_index(
    formulary: Formulary, agent_codes: np.ndarray, agent_ids: list[str], active: np.ndarray, reasons: _Reasons
) -> np.ndarray:
    """Formulary index of each active row's agent; -1 for none.  Unknown ids take check's message."""
    ids = {agent.id: index for index, agent in enumerate(formulary.agents)}
    index = np.asarray([ids.get(a, -1) for a in agent_ids], dtype=np.int64)[agent_codes]
    index = np.where(active, index, -1)

    def unknown(i: int) -> str:
        try:
            formulary.agent(agent_ids[agent_codes[i]])
        except InputError as error:
            return str(error)
        raise AssertionError("known agent")  # pragma: no cover

    reasons.add(active & (index < 0), unknown)
    return np.where(reasons.bad, -1, index)


def _misfits(
    formulary: Formulary,
    agent_index: np.ndarray,
    mode: np.ndarray,
    unit_code: np.ndarray,
    amount: np.ndarray,
    per_kg: np.ndarray,
    text_of: Callable[[int], str],
    reasons: _Reasons,
) -> None:
    """Rows whose dose cannot be had from their agent, by `check.dose_misfit` on each (unit, agent) pair."""
    table = np.zeros((len(DOSE_UNITS), len(formulary.agents) + 1), dtype=bool)
    for u, unit in enumerate(DOSE_UNITS[1:], start=1):
        for a, agent in enumerate(formulary.agents):
            probe = DoseRequest.model_validate({"agent_id": agent.id, "mode": "dose", "amount": 1.0, "unit": unit})
            table[u, a] = dose_misfit(probe, agent) is not None
    misfit = table[unit_code, agent_index] & (agent_index >= 0)

    def message(i: int) -> str:
        agent = formulary.agents[int(agent_index[i])]
        request = DoseRequest.model_validate(
            {
                "agent_id": agent.id,
                "mode": str(mode[i]),
                "amount": float(amount[i]),
                "unit": DOSE_UNITS[int(unit_code[i])],
                "per_kg": bool(per_kg[i]),
                "text": text_of(i),
            }
        )
        return str(dose_misfit(request, agent))

    reasons.add(misfit, message)
    agent_index[misfit] = -1
