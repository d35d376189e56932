"""Rows describing a formulary for people: what `formulary show` and the app's formulary screen list.

Kept in the core so the command line and the app show the same derived
figures with the same rounding.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import asdict, dataclass
from typing import Any

from osmodose.formulary.demo import DEMO_NOTE
from osmodose.formulary.limits import LIMIT_SPECS, display_unit
from osmodose.formulary.model import Formulary
from osmodose.science.precision import STOCK_DECIMALS, rounded
from osmodose.science.units import Q_


@dataclass(frozen=True)
class AgentRow:
    """One agent with the figures a checker wants beside the label."""

    id: str
    label: str
    solute: str
    concentration: str
    sodium_mmol_l: float
    sodium_mmol_per_ml: float
    osmolarity_mosm_l: float
    solute_g_per_ml: float | None
    route: str
    presentations: str
    dose_limits: str
    max_rate: str
    adult_only: bool = False
    dose_weight: str = "actual"


@dataclass(frozen=True)
class LimitRow:
    """One limit in force, with where its value comes from."""

    name: str
    value: str
    meaning: str
    source: str


def agent_rows(formulary: Formulary) -> list[AgentRow]:
    """One row per agent, in file order, with the composition derived from the concentration."""
    rows = []
    for a in formulary.agents:
        limits = [
            f"warn > {a.dose_warn.text}" if a.dose_warn else "",
            f"refuse > {a.dose_refuse.text}" if a.dose_refuse else "",
            f"per kg of {a.dose_weight} weight" if a.dose_weight != "actual" else "",
            "adults only" if a.adult_only else "",
        ]
        rows.append(
            AgentRow(
                id=a.id,
                label=a.label,
                solute=a.solute,
                concentration=a.concentration_text or "as labelled",
                sodium_mmol_l=a.sodium_mmol_l,
                sodium_mmol_per_ml=float(Q_(a.sodium_mmol_l, "mmol/L").m_as("mmol/mL")),
                osmolarity_mosm_l=a.osmolarity_mosm_l,
                solute_g_per_ml=None if a.solute_g_per_l is None else float(Q_(a.solute_g_per_l, "g/L").m_as("g/mL")),
                route="central line only" if a.central_only else "peripheral or central",
                presentations=", ".join(f"{size:g} mL" for size in a.presentations_ml) or "none listed",
                dose_limits="; ".join(x for x in limits if x) or "none",
                max_rate=f"{a.max_rate_ml_h:g} mL/h" if a.max_rate_ml_h is not None else "none",
                adult_only=a.adult_only,
                dose_weight=a.dose_weight,
            )
        )
    return rows


def limit_rows(formulary: Formulary) -> list[LimitRow]:
    """Every limit in force, in the order of the limits table, with where its value comes from."""
    rows = []
    for name, spec in LIMIT_SPECS.items():
        value = formulary.limits.get(name)
        shown = "not set" if value is None else f"{value:g} {display_unit(spec.unit)}"
        rows.append(LimitRow(name=name, value=shown, meaning=spec.meaning, source=formulary.limits.source(name)))
    return rows


#: Column headings of the agents table, in the order of `agent_cells`.
AGENT_COLUMNS: tuple[str, ...] = (
    "id",
    "label",
    "concentration",
    "Na mmol/L",
    "Na mmol/mL",
    "mOsm/L",
    "g/mL",
    "route",
    "presentations",
    "dose limits",
    "max rate",
)

#: Column headings of the limits table, in the order of `limit_cells`.
LIMIT_COLUMNS: tuple[str, ...] = ("limit", "value", "source")


def _stock(name: str, value: float | None, strip: bool = False) -> str:
    """A stock figure to its declared decimals; `strip` drops trailing zeros (g/mL: 0.03, 0.0045)."""
    if value is None:
        return "n/a"
    decimals = STOCK_DECIMALS[name]
    text = f"{rounded(value, decimals):.{decimals}f}"
    return text.rstrip("0").rstrip(".") if strip else text


def agent_cells(row: AgentRow) -> tuple[str, ...]:
    """The row as text, rounded as a checker reads labels (`precision.STOCK_DECIMALS`): whole mmol/L and mOsm/L."""
    return (
        row.id,
        row.label,
        row.concentration,
        _stock("sodium_mmol_l", row.sodium_mmol_l),
        _stock("sodium_mmol_per_ml", row.sodium_mmol_per_ml),
        _stock("osmolarity_mosm_l", row.osmolarity_mosm_l),
        _stock("solute_g_per_ml", row.solute_g_per_ml, strip=True),
        row.route,
        row.presentations,
        row.dose_limits,
        row.max_rate,
    )


def agent_json(row: AgentRow) -> dict[str, Any]:
    """The row as `formulary show --json` gives it, its figures rounded as the table prints them."""
    document = asdict(row)
    for name, decimals in STOCK_DECIMALS.items():
        if document[name] is not None:
            document[name] = float(rounded(document[name], decimals))
    return document


def show_json(formulary: Formulary, caution: str) -> dict[str, Any]:
    """What `formulary show --json` prints."""
    return {
        "formulary": {
            "name": formulary.name,
            "version": formulary.version,
            "sha256": formulary.sha256,
            "demo": formulary.demo,
        },
        "path": formulary.path,
        "agents": [agent_json(row) for row in agent_rows(formulary)],
        "limits": [asdict(row) for row in limit_rows(formulary)],
        "caution": caution,
    }


#: The agents table is printed as two tables keyed by id, to fit a terminal.
FIGURE_COLUMNS = ("id", "concentration", "Na mmol/L", "Na mmol/mL", "mOsm/L", "g/mL", "route")
STOCK_COLUMNS = ("id", "label", "presentations", "dose limits", "max rate")


def table_lines(headings: Sequence[str], rows: Sequence[Sequence[str]], chosen: Sequence[str]) -> list[str]:
    """The `chosen` columns, left-aligned, two spaces apart."""
    picks = [headings.index(name) for name in chosen]
    table = [[cells[i] for i in picks] for cells in (headings, *rows)]
    widths = [max(len(line[i]) for line in table) for i in range(len(picks))]
    return ["  ".join(cell.ljust(width) for cell, width in zip(line, widths, strict=True)).rstrip() for line in table]


def render_show(formulary: Formulary, caution: str) -> str:
    """What `formulary show` prints: the file, the agents (two tables), the limits in force, the caution."""
    agents = agent_rows(formulary)
    cells = [agent_cells(row) for row in agents]
    lines = [
        f'formulary "{formulary.name}" version "{formulary.version}"',
        *([DEMO_NOTE] if formulary.demo else []),
        f"file {formulary.path}",
        f"sha256 {formulary.sha256}",
        "",
        f"agents ({len(agents)}): composition derived from the concentration",
        *table_lines(AGENT_COLUMNS, cells, FIGURE_COLUMNS),
        "",
        "agents: label, stock and order limits",
        *table_lines(AGENT_COLUMNS, cells, STOCK_COLUMNS),
        "",
        "limits in force",
        *table_lines(LIMIT_COLUMNS, [limit_cells(row) for row in limit_rows(formulary)], LIMIT_COLUMNS),
        "",
        caution,
    ]
    return "\n".join(lines) + "\n"


def limit_cells(row: LimitRow) -> tuple[str, ...]:
    return (row.name, row.value, row.source)
