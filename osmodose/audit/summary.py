"""What an audit found, counted: statuses, findings by code and by agent, doses per kg.

Counts are summed chunk by chunk from the rule columns (nothing is kept per
row except the per-kg doses, 8 bytes each, for their medians).  Percentiles
use numpy's default linear interpolation between order statistics.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from osmodose.audit.output import formulary_ref
from osmodose.audit.run import ChunkResult
from osmodose.check.results import CAUTION, FormularyRef
from osmodose.formulary.model import Formulary
from osmodose.science.precision import round_document, text, unit_decimals

#: Per-kg figures summarised per agent: (unit, output figure name).
DOSE_MEASURES: tuple[tuple[str, str], ...] = (
    ("g/kg", "solute_g_per_kg"),
    ("mL/kg", "volume_ml_per_kg"),
    ("mmol/kg", "sodium_mmol_per_kg"),
)
STATUSES = ("error", "ok", "warn", "refuse")


class Summary:
    """A sink that counts; `to_json` and `render` give the result."""

    def __init__(self, formulary: Formulary, path: str) -> None:
        self.formulary = formulary
        self.path = path
        agents = len(formulary.agents)
        self.status = np.zeros(4, dtype=np.int64)
        self.agent_status = np.zeros((agents, 4), dtype=np.int64)
        self.codes: dict[str, np.ndarray] = {}
        self.agent_codes: dict[str, np.ndarray] = {}
        self.doses: dict[tuple[int, str], list[np.ndarray]] = {}

    def add(self, chunk: ChunkResult) -> None:
        agents = len(self.formulary.agents)
        self.status += np.bincount(chunk.status.astype(np.int64) + 1, minlength=4)
        agent = chunk.agent_index.astype(np.int64)
        with_agent = agent >= 0
        status = chunk.status.astype(np.int64) + 1
        cells = np.bincount(agent[with_agent] * 4 + status[with_agent], minlength=agents * 4)
        self.agent_status += cells.reshape(agents, 4)
        # Each rule's (agent, severity) counts in one bincount over the rows it fired on:
        # agent + 1 (0 for none) times 3, plus the severity.
        cell = (agent + 1) * 3
        for outcome in chunk.outcomes:
            counts = self.codes.setdefault(outcome.code, np.zeros(2, dtype=np.int64))
            by_agent = self.agent_codes.setdefault(outcome.code, np.zeros((agents, 2), dtype=np.int64))
            fired = np.flatnonzero(outcome.severity)
            if not len(fired):
                continue
            keys = cell[fired] + outcome.severity[fired]
            tally = np.bincount(keys, minlength=(agents + 1) * 3).reshape(agents + 1, 3)
            counts += tally[:, 1:].sum(axis=0)
            by_agent += tally[1:, 1:]
        # The rows of each agent, agents in order: one stable sort rather than a scan per agent.
        order = np.argsort(agent, kind="stable")
        bounds = np.searchsorted(agent[order], np.arange(-1, agents + 1))
        for a, item in enumerate(self.formulary.agents):
            rows = order[bounds[a + 1] : bounds[a + 2]]
            if not len(rows):
                continue
            for unit, name in DOSE_MEASURES:
                if unit == "mmol/kg" and item.sodium_mmol_l <= 0:
                    continue
                values = chunk.figures[name][rows]
                values = values[~np.isnan(values)]
                if len(values):
                    self.doses.setdefault((a, unit), []).append(values)

    def close(self) -> None:
        pass

    def dose_rows(self) -> list[dict[str, Any]]:
        out = []
        for (a, unit), parts in sorted(self.doses.items()):
            values = np.concatenate(parts)
            median, p90 = np.percentile(values, [50, 90])
            out.append(
                {
                    "agent": self.formulary.agents[a].id,
                    "unit": unit,
                    "n": len(values),
                    "min": float(values.min()),
                    "median": float(median),
                    "p90": float(p90),
                    "max": float(values.max()),
                }
            )
        return out

    def to_json(self) -> dict[str, Any]:
        agents = self.formulary.agents
        by_agent = {}
        for a, agent in enumerate(agents):
            if not self.agent_status[a].any():
                continue
            by_agent[agent.id] = {
                "rows": int(self.agent_status[a].sum()),
                **{name: int(self.agent_status[a, k]) for k, name in enumerate(STATUSES) if name != "error"},
                "findings": {
                    code: {"warn": int(counts[a, 0]), "refuse": int(counts[a, 1])}
                    for code, counts in self.agent_codes.items()
                    if counts[a].any()
                },
            }
        document: dict[str, Any] = {
            "orders": self.path,
            "formulary": formulary_ref(self.formulary),
            "rows": int(self.status.sum()),
            "status": {name: int(self.status[k]) for k, name in enumerate(STATUSES)},
            "findings": {code: {"warn": int(c[0]), "refuse": int(c[1])} for code, c in self.codes.items() if c.any()},
            "by_agent": by_agent,
            "dose_per_kg": self.dose_rows(),
            "caution": CAUTION,
        }
        rounded: dict[str, Any] = round_document(document)
        return rounded

    def render(self) -> str:
        data = self.to_json()
        f = data["formulary"]
        s = data["status"]
        lines = [
            f"osmodose audit of {data['orders']}",
            FormularyRef.model_validate(f).line(),
            "",
            f"rows: {data['rows']}   ok {s['ok']}   warn {s['warn']}   refuse {s['refuse']}   "
            f"not audited (bad rows) {s['error']}",
            "",
            "findings by code                 warn  refuse",
        ]
        lines += [f"  {code:<28} {c['warn']:>6}  {c['refuse']:>6}" for code, c in data["findings"].items()]
        if not data["findings"]:
            lines.append("  none")
        lines += ["", "by agent                  rows      ok    warn  refuse"]
        for agent, item in data["by_agent"].items():
            lines.append(f"  {agent:<20} {item['rows']:>7} {item['ok']:>7} {item['warn']:>7} {item['refuse']:>7}")
            lines += [
                f"      {code:<24} warn {c['warn']:>6}  refuse {c['refuse']:>6}" for code, c in item["findings"].items()
            ]
        lines += ["", "dose per kg                        n       min    median       p90       max"]
        for d in data["dose_per_kg"]:
            places = unit_decimals(d["unit"], "dose-per-kg")
            figures = " ".join(f"{text(d[k], places):>9}" for k in ("min", "median", "p90", "max"))
            lines.append(f"  {d['agent']:<20} {d['unit']:<8} {d['n']:>7} {figures}")
        lines += ["", CAUTION]
        return "\n".join(lines) + "\n"
