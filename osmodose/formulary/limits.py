"""The safety limits a formulary may set, each with its default and its source.

A unit's `[limits]` table overrides any of these; local protocol always wins.
The table is the single place a limit's unit, default and provenance live: the
file model, the resolved formulary, `formulary show` and the rules all read it.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class LimitSpec:
    """One limit: its canonical unit, accepted units, default and source."""

    unit: str
    accepted: tuple[str, ...]
    default: float | None
    source: str
    meaning: str


_CONC = ("mmol/L", "mEq/L")
_OSMOLALITY = ("mOsm/kg", "mmol/kg")

LIMIT_SPECS: dict[str, LimitSpec] = {
    "sodium_warn": LimitSpec(
        "mmol/L",
        _CONC,
        155.0,
        "common practice (no single source)",
        "serum sodium, current or projected, above which an order is warned",
    ),
    "sodium_refuse": LimitSpec(
        "mmol/L",
        _CONC,
        160.0,
        "US Joint Trauma System guideline: hold hyperosmolar infusions above 160",
        "serum sodium, current or projected, above which an order is refused",
    ),
    "osmolality_warn": LimitSpec(
        "mOsm/kg",
        _OSMOLALITY,
        310.0,
        "common practice: inside the 300-320 target (Hinson 2013), no single source",
        "serum osmolality (measured, else calculated) above which an order is warned",
    ),
    "osmolality_refuse": LimitSpec(
        "mOsm/kg",
        _OSMOLALITY,
        320.0,
        "Hinson HE et al. J Intensive Care Med 2013;28:3-11: hold mannitol above 320",
        "serum osmolality (measured, else calculated) above which an order is refused",
    ),
    "osmolar_gap_warn": LimitSpec(
        "mOsm/kg",
        _OSMOLALITY,
        20.0,
        "common practice (sources vary from 10 to 20)",
        "osmolar gap above which mannitol is warned (mannitol accumulating)",
    ),
    "sodium_rise_24h_warn": LimitSpec(
        "mmol/L",
        _CONC,
        8.0,
        "Verbalis JG et al. Am J Med 2013: 8 mmol/L in 24 h for high risk of osmotic demyelination",
        "projected or measured sodium rise within 24 h above which an order is warned",
    ),
    "sodium_rise_24h_refuse": LimitSpec(
        "mmol/L",
        _CONC,
        10.0,
        "Verbalis JG et al. Am J Med 2013 (limit 10-12 in 24 h) and "
        "Spasovski G et al. Eur J Endocrinol 2014 (10 in the first 24 h)",
        "projected or measured sodium rise within 24 h above which an order is refused",
    ),
    "sodium_fall_24h_warn": LimitSpec(
        "mmol/L",
        _CONC,
        10.0,
        "secondary sources: chronic hypernatraemia lowered by at most about 10 mmol/L a day",
        "projected or measured sodium fall within 24 h above which an order is warned",
    ),
    "peripheral_osmolarity_warn": LimitSpec(
        "mOsm/L",
        ("mOsm/L",),
        900.0,
        "parenteral nutrition guidance for peripheral lines (secondary source)",
        "infusate osmolarity above which a peripheral line is warned",
    ),
    "dose_tolerance": LimitSpec(
        "percent",
        ("percent",),
        10.0,
        "common practice (no single source)",
        "largest accepted difference between a stated dose and the recomputed one",
    ),
    "sodium_tolerance": LimitSpec(
        "mmol/L",
        _CONC,
        2.0,
        "common practice (no single source): sodium is reported to 1 mmol/L and repeat "
        "measurements commonly differ by 1-2 mmol/L",
        "largest accepted difference between a stated expected sodium and the projected one",
    ),
    "lab_max_age": LimitSpec(
        "h",
        ("h",),
        6.0,
        "common practice: re-measure sodium every 2-6 h during active therapy",
        "age of the latest labs beyond which they are too old to dose on",
    ),
    "icp_treat_above": LimitSpec(
        "mmHg",
        ("mmHg",),
        22.0,
        "Carney N et al. Brain Trauma Foundation guidelines, 4th ed. Neurosurgery 2017;80:6-15",
        "intracranial pressure above which treatment is indicated",
    ),
    "cpp_target_min": LimitSpec(
        "mmHg",
        ("mmHg",),
        60.0,
        "Carney N et al. Brain Trauma Foundation guidelines, 4th ed. Neurosurgery 2017;80:6-15 (target 60-70)",
        "cerebral perfusion pressure below which a reading is warned",
    ),
    "osmolar_gap_rise_warn": LimitSpec(
        "mOsm/kg",
        _OSMOLALITY,
        10.0,
        "common practice (no single source)",
        "rise of the osmolar gap between labs, after mannitol, above which it is warned",
    ),
    "mannitol_24h_max": LimitSpec(
        "g/kg",
        ("g/kg",),
        None,
        "no default: set by the unit's protocol",
        "cumulative mannitol within 24 h above which a dose is warned",
    ),
}

#: Pairs whose warn must not exceed refuse.
ORDERED_PAIRS: tuple[tuple[str, str], ...] = (
    ("sodium_warn", "sodium_refuse"),
    ("osmolality_warn", "osmolality_refuse"),
    ("sodium_rise_24h_warn", "sodium_rise_24h_refuse"),
)


def display_unit(unit: str) -> str:
    """A canonical unit as people write it ("percent" is "%")."""
    return "%" if unit == "percent" else unit
