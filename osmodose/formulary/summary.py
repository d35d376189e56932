"""Rows describing a formulary for people: what `formulary show` and the app's formulary screen list.

Kept in the core so the command line and the app show the same derived
figures with the same rounding.
"""

from __future__ import annotations

from dataclasses import dataclass

from osmodose.formulary.limits import LIMIT_SPECS, display_unit
from osmodose.formulary.model import Formulary
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
                route="central line only" if a.route == "central" else "peripheral or central",
                presentations=", ".join(f"{size:g} mL" for size in a.presentations_ml) or "none listed",
                dose_limits="; ".join(x for x in limits if x) or "none",
                max_rate=f"{a.max_rate_ml_h:g} mL/h" if a.max_rate_ml_h is not None else "none",
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


def agent_cells(row: AgentRow) -> tuple[str, ...]:
    """The row as text, rounded as a checker reads labels: whole mmol/L and mOsm/L, mmol/mL to 3 places."""
    return (
        row.id,
        row.label,
        row.concentration,
        f"{row.sodium_mmol_l:.0f}",
        f"{row.sodium_mmol_per_ml:.3f}",
        f"{row.osmolarity_mosm_l:.0f}",
        "n/a" if row.solute_g_per_ml is None else f"{row.solute_g_per_ml:.4g}",
        row.route,
        row.presentations,
        row.dose_limits,
        row.max_rate,
    )


def limit_cells(row: LimitRow) -> tuple[str, ...]:
    return (row.name, row.value, row.source)
