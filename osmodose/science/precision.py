"""How many decimals each figure is shown with: the precision the trade reads, declared once.

The engine keeps full precision; every output (the JSON of `check`, `verify`,
`course`, the audit's CSV and JSON, and the text reports) rounds once, at the
boundary, by these tables, so a figure reads the same in every output and no
float noise (`500.00000000000006`) reaches a user.  Volumes are read to
0.1 mL, sodium to 0.1 mmol/L, osmolality to 0.1 mOsm/kg and a stock's sodium
to whole mmol/L (the brief of the output work, common practice: what pumps,
syringes and laboratory reports show); per-kg doses to 0.01, grams of solute
to 0.01 g.

A figure is named by its output key (`volume_ml`); a finding's or a
discrepancy's figures (`value`, `limit`, `stated`, `recomputed`, a dose
`amount`) by the `unit` beside them.  A judged value is never rounded onto its
limit: "310.0, above the limit of 310" reads as a contradiction, so a value
within rounding of its limit gets the decimals that tell them apart
(`apart`), as the findings' messages do.

Rounding is numpy's (`np.round`) for a single figure and a column alike, so an
audit row and a check of the same case print the same digits.
"""

from __future__ import annotations

import functools
import math
from collections.abc import Mapping
from typing import Any

import numpy as np

#: Output key -> decimals.  Every float key of `check --json`, `verify --json`, `course show|plan
#: --json` and the audit's rows is here (a test walks each document).
FIGURE_DECIMALS: Mapping[str, int] = {
    # the patient (typed; weight to 10 g for a neonate, age to about 4 days for an infant)
    "weight_kg": 2,
    "age_years": 2,
    "height_cm": 1,
    "total_body_water_l": 1,
    # serum labs, as a laboratory reports them
    "sodium_mmol_l": 1,
    "potassium_mmol_l": 1,
    "glucose_mmol_l": 1,
    "urea_mmol_l": 1,
    "ethanol_mmol_l": 1,
    "osmolality_mosm_kg": 1,
    "calculated_osmolality_mosm_kg": 1,
    "effective_osmolality_mosm_kg": 1,
    "osmolar_gap_mosm_kg": 1,
    # the order
    "volume_ml": 1,
    "size_ml": 1,
    "discard_ml": 1,
    "solute_g": 2,
    "sodium_mmol": 1,
    "osmoles_mosm": 0,
    "volume_ml_per_kg": 2,
    "solute_g_per_kg": 2,
    "sodium_mmol_per_kg": 2,
    "osmoles_mosm_per_kg": 2,
    "rate_ml_h": 1,
    "duration_min": 1,
    "sodium_change_per_litre_mmol_l": 1,
    "projected_sodium_mmol_l": 1,
    "projected_sodium_rise_mmol_l": 1,
    "osmolar_rate_mosm_kg_min": 2,
    "dosing_weight_kg": 2,
    # the projection with urine, its range, free water (issue 10)
    "projected_sodium_without_losses_mmol_l": 1,
    "projected_sodium_range_low_mmol_l": 1,
    "projected_sodium_range_high_mmol_l": 1,
    "projected_sodium_range_mmol_l": 1,
    "electrolyte_free_water_clearance_l": 2,
    "free_water_deficit_l": 2,
    "tbw_l": 1,
    "apparent_tbw_l": 1,
    # the patient's own figures (issue 14)
    "bmi_kg_m2": 1,
    "katz": 1,
    "hillier": 1,
    "rise_mmol_l": 1,
    "already_used_mmol_l": 1,
    "total_mmol_l": 1,
    "warn_mmol_l": 1,
    "refuse_mmol_l": 1,
    "target_low_mmol_l": 1,
    "target_high_mmol_l": 1,
    # the order as written (verify)
    "stated_sodium_mmol_l": 1,
    # a course of therapy
    "sodium_rise_24h_mmol_l": 1,
    "sodium_fall_24h_mmol_l": 1,
    "mannitol_g": 1,
    "mannitol_24h_g_per_kg": 2,
    "projected_sodium_after_mmol_l": 1,
    "projected_sodium_before_mmol_l": 1,
    "from_sodium_mmol_l": 1,
    "map_mmhg": 0,
    "icp_mmhg": 0,
    "cpp_mmhg": 0,
    "age_h": 1,
    # what the patient's response teaches (issue 10)
    "estimated_tbw_l": 1,
    "sodium_before_mmol_l": 1,
    "sodium_after_mmol_l": 1,
    "urine_out_ml": 1,
    "over_min": 1,
    "before_mmhg": 0,
    "lowest_after_mmhg": 0,
    "fall_mmhg": 0,
    "threshold_mmhg": 0,
    "at_or_below_threshold_h": 1,
}

#: Unit -> decimals, for the figures a `unit` key describes (findings, discrepancies, dose amounts).
UNIT_DECIMALS: Mapping[str, int] = {
    "mmol/L": 1,
    "mOsm/kg": 1,
    "mOsm/L": 0,
    "mL": 1,
    "mL/h": 1,
    "g": 2,
    "mmol": 1,
    "mOsm": 0,
    "g/kg": 2,
    "mL/kg": 2,
    "mmol/kg": 2,
    "h": 1,
    "mmHg": 0,
    "": 2,
}

#: Finding codes whose figures are read to other decimals than their unit's: a per-kg dose is
#: read to 0.01 whatever it is per kg of (mOsm/kg is also osmolality's unit).
CODE_DECIMALS: Mapping[str, int] = {"dose-per-kg": 2}

#: A stock's composition, as `formulary show` lists it: whole mmol/L and mOsm/L as on a label,
#: mmol/mL to 0.001 (23.4 % is 4.004), g/mL to 0.0001 (0.45 % is 0.0045).
STOCK_DECIMALS: Mapping[str, int] = {
    "sodium_mmol_l": 0,
    "sodium_mmol_per_ml": 3,
    "osmolarity_mosm_l": 0,
    "solute_g_per_ml": 4,
}

#: The keys beside a `unit` whose numbers are in that unit (a `limit` is as the formulary writes it).
UNIT_FIGURES: tuple[str, ...] = ("value", "stated", "recomputed", "amount", "min", "median", "p90", "max")
#: The most decimals a value judged against a limit is given to tell it apart from the limit, and
#: the most a limit is written with (limits come from the formulary's text: "1.5 g/kg", "160 mmol/L").
MOST_DECIMALS = 4


def rounded(values: Any, decimals: int) -> Any:
    """`values` (a float or an array) to `decimals` places; NaN stays NaN and -0.0 becomes 0.0."""
    if isinstance(values, float):
        return _rounded_float(values, decimals)
    out = np.round(np.asarray(values, dtype=float), decimals) + 0.0
    return float(out) if out.ndim == 0 else out


#: 10**d as numpy's rounding takes it (each an exact double).
_POWERS_OF_TEN = tuple(10.0**d for d in range(9))


def _rounded_float(value: float, decimals: int) -> float:
    """One float rounded by numpy's rule, as a column is: times 10**d, to the nearest whole (ties to even), divided.

    These are the three IEEE operations `np.round` makes, done in Python: the
    same float, without numpy's call on one value (an audit rounds a few
    hundred thousand distinct values for its messages).
    """
    if 0 <= decimals < len(_POWERS_OF_TEN):
        scale = _POWERS_OF_TEN[decimals]
        scaled = value * scale
        if math.isfinite(scaled):
            return round(scaled) / scale + 0.0
    return float(np.round(np.float64(value), decimals)) + 0.0


def figure(name: str, values: Any) -> Any:
    """A figure (or a column of it) rounded as its output key `name` is declared."""
    return rounded(values, FIGURE_DECIMALS[name])


def unit_decimals(unit: str, code: str | None = None) -> int:
    """The decimals of a figure in `unit` (a finding's `code` may say otherwise)."""
    if code is not None and code in CODE_DECIMALS:
        return CODE_DECIMALS[code]
    return UNIT_DECIMALS.get(unit, MOST_DECIMALS)


def apart(value: float, limit: float | None, decimals: int) -> int:
    """The decimals that show `value` without printing `limit` itself (from `decimals` up to 4).

    "310.0 is above the limit of 310" reads as a contradiction; "310.04" does not.
    """
    if limit is None or not math.isfinite(value) or not math.isfinite(limit) or value == limit:
        return decimals
    digits = decimals
    while digits < MOST_DECIMALS and rounded(value, digits) == limit:
        digits += 1
    return digits


@functools.lru_cache(maxsize=1 << 16)
def judged(value: float | None, limit: float | None, unit: str, code: str | None = None) -> float | None:
    """A judged value rounded for its unit, told apart from its limit."""
    if value is None or not math.isfinite(value):
        return value
    decimals = unit_decimals(unit, code)
    return float(rounded(value, apart(value, limit, decimals)))


def limit_figure(limit: float | None) -> float | None:
    """A limit as the formulary writes it, to at most `MOST_DECIMALS` (infinite and None stay as they are)."""
    if limit is None or not math.isfinite(limit):
        return limit
    return float(rounded(limit, MOST_DECIMALS))


def round_finding(finding: dict[str, Any]) -> dict[str, Any]:
    """A finding (`code`, `value`, `limit`, `unit`, ...) with its value and limit rounded, as `round_document` does."""
    limit, unit, code = finding.get("limit"), str(finding.get("unit", "")), finding.get("code")
    return {
        **finding,
        "value": judged(finding.get("value"), limit, unit, code if isinstance(code, str) else None),
        "limit": limit_figure(limit),
    }


def text(value: float | None, decimals: int, unit: str = "") -> str:
    """A figure as text with exactly `decimals` places; None or NaN is "n/a" (never read as 0)."""
    if value is None or not math.isfinite(value):
        return "n/a"
    return f"{rounded(value, decimals):.{decimals}f} {unit}".rstrip()


def figure_text(name: str, value: float | None, unit: str = "") -> str:
    """A figure as text, to the decimals declared for its output key `name`."""
    return text(value, FIGURE_DECIMALS[name], unit)


def signed_text(name: str, value: float | None, unit: str = "") -> str:
    """A change as text with its sign (+6.0, -4.8), to the decimals declared for `name`."""
    if value is None or not math.isfinite(value):
        return "n/a"
    decimals = FIGURE_DECIMALS[name]
    return f"{rounded(value, decimals):+.{decimals}f} {unit}".rstrip()


def round_document(document: Any) -> Any:
    """A JSON document (dicts, lists, plain values) with every declared float rounded.

    Floats under a key of `FIGURE_DECIMALS` take its decimals; the figures of an
    object with a `unit` (`UNIT_FIGURES`) take the unit's, a judged `value` told
    apart from its `limit`, and the `limit` keeps at most `MOST_DECIMALS` (it is
    the formulary's own figure).  Anything not declared is left as it is.
    """
    if isinstance(document, list):
        return [round_document(item) for item in document]
    if not isinstance(document, dict):
        return document
    unit = document.get("unit")
    out: dict[str, Any] = {}
    for key, item in document.items():
        if isinstance(item, float) and isinstance(unit, str) and key in UNIT_FIGURES:
            code = document.get("code")
            code = code if isinstance(code, str) else None
            limit = document.get("limit") if key == "value" else None
            out[key] = judged(item, limit if isinstance(limit, float) else None, unit, code)
        elif isinstance(item, float) and isinstance(unit, str) and key == "limit":
            out[key] = limit_figure(item)
        elif isinstance(item, float) and key in FIGURE_DECIMALS:
            out[key] = item if not math.isfinite(item) else figure(key, item)
        elif isinstance(item, list) and key in FIGURE_DECIMALS and all(isinstance(x, float) for x in item):
            out[key] = [x if not math.isfinite(x) else figure(key, x) for x in item]  # a [low, high] range
        else:
            out[key] = round_document(item)
    return out


def decimals_of(number: float) -> int:
    """How many decimals the shortest text of `number` has (`repr`, as JSON writes it)."""
    written = repr(float(number))
    if "e" in written or "E" in written:
        mantissa, exponent = written.lower().split("e")
        return max(0, len(mantissa.partition(".")[2].rstrip("0")) - int(exponent))
    fraction = written.partition(".")[2]
    return 0 if fraction == "0" else len(fraction)
