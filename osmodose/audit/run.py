"""An audit: an orders file through the engine a chunk at a time, results to sinks.

Each chunk goes through exactly what `run_check` runs, on whole columns:
`convert` (the request checks), `engine.compute`, `check.volume_problems`
(the orders whose worked-out volume cannot be given) and `rules.apply_rules`.
Memory is the chunk's plus what the sinks keep, so it grows with the file
only as far as the summary's dose distributions do (8 bytes a figure).
"""

from __future__ import annotations

import math
import sys
import time
from collections.abc import Sequence
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Protocol, TextIO

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from osmodose.audit.columns import Header
from osmodose.audit.convert import Converted, convert
from osmodose.audit.figures import FIGURES
from osmodose.audit.reader import OrdersFile, ParquetOrders, open_orders
from osmodose.case.inputs import Patient
from osmodose.check.balance import urine_problems, urine_volume_error
from osmodose.check.engine import compute
from osmodose.check.judging import SEVERITY_NAMES
from osmodose.check.rules import RuleOutcome, apply_rules
from osmodose.check.run import tbw_error, tbw_problems, volume_error, volume_problems
from osmodose.formulary.model import Formulary

#: Rows per chunk: big enough that the engine's fixed cost per call is small
#: beside the arithmetic, small enough that a chunk's text stays a few tens of MB.
CHUNK_ROWS = 50_000

STATUS_NAMES = {-1: "error", 0: "ok", 1: "warn", 2: "refuse"}


def _opt(value: float) -> float | None:
    return None if math.isnan(value) else float(value)


@dataclass(frozen=True)
class ChunkResult:
    """The audit of one chunk, every array one entry per row of the chunk.

    A bad row has status -1, its reason in `reasons`, agent index -1, NaN
    figures and no finding.
    """

    lines: np.ndarray
    #: The order ids as written (stripped), when the file has them.
    order_id: pa.Array | None
    #: The agent cell of each row, as codes into the chunk's distinct agent cells (stripped).
    agent_codes: np.ndarray
    agent_ids: list[str]
    status: np.ndarray
    reasons: dict[int, str]
    #: Total body water by Watson's formula (else by the fraction of weight).
    use_watson: np.ndarray
    figures: dict[str, np.ndarray]
    agent_index: np.ndarray
    outcomes: list[RuleOutcome]

    def __len__(self) -> int:
        return len(self.lines)

    def findings(self) -> dict[int, list[dict[str, object]]]:
        """Position -> findings as `check --json` lists them (refusals first, then in rule order)."""
        found: dict[int, list[dict[str, object]]] = {}
        for outcome in self.outcomes:
            for k in np.flatnonzero(outcome.severity).tolist():
                found.setdefault(k, []).append(
                    {
                        "code": outcome.code,
                        "severity": SEVERITY_NAMES[int(outcome.severity[k])],
                        "message": outcome.message(k),
                        "value": _opt(outcome.value[k]),
                        "limit": _opt(outcome.limit[k]),
                        "unit": outcome.unit,
                    }
                )
        for items in found.values():
            items.sort(key=lambda item: item["severity"] != "refuse")
        return found


class Sink(Protocol):
    """Where chunk results go: an output file, the summary, the list of bad rows."""

    def add(self, chunk: ChunkResult) -> None: ...

    def close(self) -> None: ...


def audit_chunk(converted: Converted, lines: np.ndarray, formulary: Formulary) -> ChunkResult:
    """Engine and rules over the chunk, as `run_check` runs them on a batch of one.

    The engine runs on every row (a bad row's inputs give figures that are then
    dropped): each figure and rule is worked row by row, so the good rows get
    exactly what they would get alone, and no column is gathered or scattered.
    """
    n = len(lines)
    reasons = dict(converted.reasons)
    good = converted.good()
    cases = converted.cases()
    with np.errstate(all="ignore"):
        figures = compute(cases, formulary.agents, formulary.settings, formulary.limits)
        outcomes = apply_rules(cases, figures, formulary.agents, formulary.limits, converted.line, formulary.settings)
        unreachable, implausible = volume_problems(converted.mode, figures.volume_ml)
        weight = cases.weight_kg
        bad_tbw = good & tbw_problems(
            converted.use_watson, cases.age_years, weight, figures.tbw_l, formulary.settings.adult_age_years
        )
    for i in np.flatnonzero(bad_tbw).tolist():
        patient = Patient(weight_kg=float(weight[i]), age_years=float(cases.age_years[i]), sex="male")
        reasons[i] = str(tbw_error(True, patient, float(figures.tbw_l[i]), formulary.settings.adult_age_years))
    bad_urine = good & ~bad_tbw & urine_problems(cases.urine_column("urine-volume"), figures.tbw_low_l)
    for i in np.flatnonzero(bad_urine).tolist():
        reasons[i] = str(urine_volume_error(converted.shown("urine-volume", i), float(figures.tbw_low_l[i])))
    bad_tbw = bad_tbw | bad_urine
    failed = good & ~bad_tbw & (converted.mode != "") & (unreachable | implausible)
    for i in np.flatnonzero(failed).tolist():
        agent = formulary.agents[int(converted.agent_index[i])]
        sodium = float(converted.columns["sodium"][i])
        error = volume_error(converted.dose_request(i, formulary), agent, sodium, float(figures.volume_ml[i]))
        reasons[i] = str(error)
    bad = np.flatnonzero(~good | failed | bad_tbw)
    full = {}
    for name, attribute in FIGURES:
        column = getattr(figures, attribute)
        column[bad] = np.nan
        full[name] = column
    status = np.zeros(n, dtype=np.int8)
    for outcome in outcomes:
        outcome.severity[bad] = 0
        np.maximum(status, outcome.severity, out=status)
    status[bad] = -1
    agent_index = converted.agent_index.copy()
    agent_index[bad] = -1
    return ChunkResult(
        lines=lines,
        order_id=None,
        agent_codes=converted.agent_codes,
        agent_ids=converted.agent_ids,
        status=status,
        reasons=reasons,
        use_watson=converted.use_watson,
        figures=full,
        agent_index=agent_index,
        outcomes=outcomes,
    )


class Progress:
    """A one-line progress bar on stderr, redrawn after each chunk."""

    WIDTH = 30

    def __init__(self, stream: TextIO | None = None) -> None:
        self.stream = stream or sys.stderr

    def update(self, fraction: float, rows: int) -> None:
        filled = round(fraction * self.WIDTH)
        bar = "#" * filled + "." * (self.WIDTH - filled)
        self.stream.write(f"\raudit [{bar}] {fraction:4.0%} {rows:,} rows")
        self.stream.flush()

    def finish(self) -> None:
        self.stream.write("\n")
        self.stream.flush()


def run_audit(
    path: Path | str | OrdersFile | ParquetOrders,
    formulary: Formulary,
    sinks: Sequence[Sink],
    chunk_rows: int = CHUNK_ROWS,
    progress: Progress | None = None,
    timings: dict[str, float] | None = None,
) -> Header:
    """Audit every row of the file (a path, or one already open) into the sinks.

    A bad header raises OrdersFileError before any row.

    `timings`, when given, gets the seconds spent reading, converting, in the
    engine and rules, and in the sinks (for the benchmark).
    """
    if not isinstance(path, (OrdersFile, ParquetOrders)):
        with open_orders(path) as orders:
            return run_audit(orders, formulary, sinks, chunk_rows, progress, timings)
    orders = path
    spent = {"read": 0.0, "convert": 0.0, "engine": 0.0, "sinks": 0.0}
    rows = 0
    try:
        chunks = orders.chunks(chunk_rows)
        while True:
            start = time.perf_counter()
            raw = next(chunks, None)
            after_read = time.perf_counter()
            spent["read"] += after_read - start
            if raw is None:
                break
            converted = convert(orders.header, raw, formulary)
            after_convert = time.perf_counter()
            result = audit_chunk(converted, raw.lines, formulary)
            if "order-id" in orders.header:
                result = replace(result, order_id=pc.utf8_trim_whitespace(raw.cells["order-id"].array))
            after_engine = time.perf_counter()
            for sink in sinks:
                sink.add(result)
            spent["convert"] += after_convert - after_read
            spent["engine"] += after_engine - after_convert
            spent["sinks"] += time.perf_counter() - after_engine
            rows += len(raw)
            del raw, converted, result
            if progress is not None:
                progress.update(orders.fraction_read(), rows)
    except BaseException:
        for sink in sinks:  # a sink writing on a thread of its own stops before the error goes on
            abandon = getattr(sink, "abandon", None)
            if abandon is not None:
                abandon()
        raise
    header = orders.header
    if progress is not None:
        progress.finish()
    closing = time.perf_counter()
    for sink in sinks:
        sink.close()
    spent["sinks"] += time.perf_counter() - closing
    if timings is not None:
        timings.update(spent)
    return header
