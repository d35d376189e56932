"""The audit's speed floor: polars reads the orders, numpy computes the same figures, polars writes them.

    python benchmarks/audit_floor.py ORDERS.csv PARAMS.json RESULTS.csv

A program as fast as the audit's job allows with columnar tools: polars'
multi-threaded CSV reader and writer, the engine's formulas and the rules'
thresholds written directly in numpy on the canonical arrays.  It checks
nothing and writes no message text (the audit does both), only the row, the
status and the 21 figures of each order.  PARAMS.json (written by
`audit_bench.py` from the formulary and `osmodose.science.formulas`) holds
the agents' composition, the limits and the formulas' constants, so this
program imports neither pint nor pydantic nor the core (only the figures'
names, `osmodose.audit.figures`).  Imports polars (the `bench` extra), never
used by osmodose itself.
"""

from __future__ import annotations

import json
import sys
from typing import Any

import numpy as np

from osmodose.audit.figures import FIGURES  # the names only: no pint, no pydantic, nothing of the core

#: Dose unit codes, as the engine numbers them (osmodose.check.engine.DOSE_UNITS).
UNIT_CODES = {"g": 1, "mL": 2, "mmol": 3, "mOsm": 4, "mmol/L": 5}
#: Within 1e-9 (relative) of a limit is at it (osmodose.check.judging's tolerance).
AT = 1e-9


def floor_tbw(
    w: np.ndarray, age: np.ndarray, h: np.ndarray, male: np.ndarray, use_watson: np.ndarray, p: dict[str, Any]
) -> np.ndarray:
    """Total body water in plain numpy, with the fractions and Watson coefficients in `p` (from formulas.py)."""
    return floor_tbw_both(w, age, h, male, use_watson, p)[0]


def floor_tbw_both(
    w: np.ndarray, age: np.ndarray, h: np.ndarray, male: np.ndarray, use_watson: np.ndarray, p: dict[str, Any]
) -> tuple[np.ndarray, np.ndarray]:
    """(TBW used, the other method's TBW or NaN), as the engine's `tbw_estimates` gives them."""
    c = p["constants"]
    elderly = age >= p["elderly_age_years"]
    man = np.where(elderly, c["TBW_FRACTION_ELDERLY_MAN"], c["TBW_FRACTION_MAN"])
    woman = np.where(elderly, c["TBW_FRACTION_ELDERLY_WOMAN"], c["TBW_FRACTION_WOMAN"])
    child = np.where(age < p["infant_age_years"], p["tbw_fraction_infant"], p["tbw_fraction_child"])
    fraction = np.where(age < p["adult_age_years"], child, np.where(male, man, woman))
    men = (
        c["WATSON_MAN_INTERCEPT"] - c["WATSON_MAN_AGE"] * age + c["WATSON_MAN_HEIGHT"] * h + c["WATSON_MAN_WEIGHT"] * w
    )
    women = c["WATSON_WOMAN_INTERCEPT"] + c["WATSON_WOMAN_HEIGHT"] * h + c["WATSON_WOMAN_WEIGHT"] * w
    watson = np.where(male, men, women)
    low, high = p["tbw_share_of_weight"]
    fits = (age >= p["adult_age_years"]) & (watson / w >= low) & (watson / w <= high)
    other = np.where(use_watson, w * fraction, np.where(fits, watson, np.nan))
    return np.where(use_watson, watson, w * fraction), other


def floor_range(
    na: np.ndarray, cations: np.ndarray, litres: np.ndarray, tbw: np.ndarray, other: np.ndarray, a: dict, p: dict
) -> tuple[np.ndarray, np.ndarray]:
    """The projected sodium's (low, high), no urine: the TBW band and the sodium's error, then the wider rise."""
    c, v = p["constants"], p["limits"]
    see = np.where(a["male"], c["WATSON_SEE_MAN_L"], c["WATSON_SEE_WOMAN_L"])
    share_low, share_high = p["tbw_share_of_weight"]
    w = a["weight"]
    low = np.fmin(np.maximum(np.fmin(tbw, other) - see, share_low * w), tbw)
    high = np.fmax(np.minimum(np.fmax(tbw, other) + see, share_high * w), tbw)
    error = v["projection_sodium_error"]
    corners = [
        (na + sign * error) + litres * (cations - (na + sign * error)) / (t + litres)
        for sign in (-1.0, 1.0)
        for t in (low, high)
    ]
    projected = na + litres * (cations - na) / (tbw + litres)
    rise = projected - na
    widened = (rise > 0) & (na < v["sodium_rise_applies_below"] * (1 - AT))
    top = np.where(widened, np.fmax(np.maximum.reduce(corners), na + v["projection_rise_underprediction"] / 100 * rise),
                   np.maximum.reduce(corners))  # fmt: skip
    return np.fmin(np.minimum.reduce(corners), projected), np.fmax(top, projected)


def floor(a: dict[str, np.ndarray], p: dict[str, Any]) -> dict[str, np.ndarray]:
    """The engine's 21 figures and the rules' worst severity, in plain numpy on canonical arrays."""
    idx = a["agent_index"]
    has = idx >= 0
    agents = p["agents"]
    safe = np.where(has, idx, len(agents))

    def table(key: str, missing: float = np.nan) -> np.ndarray:
        return np.asarray([*(missing if x[key] is None else x[key] for x in agents), np.nan], dtype=float)[safe]

    g_l, na_l, osm_l, cations = (
        table("solute_g_per_l"),
        table("sodium_mmol_l"),
        table("osmolarity_mosm_l"),
        table("cations_mmol_l"),
    )
    mannitol, central = table("mannitol") == 1, table("central") == 1
    projects, no_max_rate, adult_only = table("projects") == 1, table("no_max_rate") == 1, table("adult_only") == 1
    w, age, h, male, na = a["weight"], a["age"], a["height"], a["male"], a["sodium"]
    tbw, other_tbw = floor_tbw_both(w, age, h, male, a["use_watson"], p)
    calc = 2 * na + a["glucose"] + a["urea"] + np.nan_to_num(a["ethanol"])
    gap = a["osmolality"] - calc
    amount = np.where(a["per_kg"], a["amount"] * w, a["amount"])
    unit = a["unit_code"]
    gapc = cations - na
    r = a["amount"]
    reach = (r != 0) & (np.sign(gapc) == np.sign(r)) & (np.abs(gapc) > np.abs(r))
    volume = np.select(
        [unit == 2, unit == 1, unit == 3, unit == 4, unit == 5],
        [
            amount,
            amount / g_l * 1000,
            amount / np.where(na_l > 0, na_l, np.nan) * 1000,
            amount / np.where(osm_l > 0, osm_l, np.nan) * 1000,
            np.where(reach, r * tbw / (gapc - r), np.nan) * 1000,
        ],
        default=np.nan,
    )
    volume = np.where(has, volume, np.nan)
    litres = volume / 1000
    out = {
        "tbw_l": tbw,
        "calculated_osmolality": calc,
        "effective_osmolality": 2 * na + a["glucose"],
        "osmolar_gap": gap,
        "volume_ml": volume,
        "solute_g": litres * g_l,
        "sodium_mmol": litres * na_l,
        "osmoles_mosm": litres * osm_l,
        "volume_ml_per_kg": volume / w,
        "solute_g_per_kg": litres * g_l / w,
        "sodium_mmol_per_kg": litres * na_l / w,
        "osmoles_mosm_per_kg": litres * osm_l / w,
        "rate_ml_h": volume / np.where(a["duration"] > 0, a["duration"], np.nan) * 60,
        "sodium_change_per_litre": (cations - na) / (tbw + 1),
    }
    projected = na + litres * (cations - na) / (tbw + litres)
    rise = projected - na
    out["projected_sodium"] = projected
    out["projected_rise"] = rise
    v = p["limits"]
    out["projected_sodium_without_losses"] = projected  # no urine in the file
    out["projected_sodium_low"], out["projected_sodium_high"] = floor_range(na, cations, litres, tbw, other_tbw, a, p)
    out["free_water_clearance_l"] = np.full(len(na), np.nan)
    deficit = tbw * (na / v["free_water_target_sodium"] - 1)
    out["free_water_deficit_l"] = np.where(na > v["free_water_deficit_above"] * (1 + AT), deficit, np.nan)
    osmolality = np.where(np.isnan(a["osmolality"]), calc, a["osmolality"])
    lowering = rise < 0

    def sev(value: np.ndarray, warn: float | np.ndarray, refuse: float | np.ndarray) -> np.ndarray:
        # Limits are positive; within 1e-9 (relative) of a limit is at it (rules.LIMIT_RELATIVE_TOLERANCE).
        return np.where(value > refuse * (1 + 1e-9), 2, np.where(value > warn * (1 + 1e-9), 1, 0))

    def below(value: np.ndarray, warn: float, refuse: float) -> np.ndarray:
        return np.where(value < refuse * (1 - 1e-9), 2, np.where(value < warn * (1 - 1e-9), 1, 0))

    with np.errstate(invalid="ignore"):
        high_risk = (na <= 105) | (a["potassium"] < 3.5)
    rise_refuse = np.where(
        high_risk, min(v["sodium_rise_24h_refuse"], v["sodium_rise_24h_high_risk_refuse"]), v["sodium_rise_24h_refuse"]
    )
    worst = np.where(lowering, 0, sev(na, v["sodium_warn"], v["sodium_refuse"]))
    worst = np.maximum(worst, np.where(has & ~lowering, sev(projected, v["sodium_warn"], v["sodium_refuse"]), 0))
    worst = np.maximum(
        worst, np.where(has & lowering, below(projected, v["sodium_low_warn"], v["sodium_low_refuse"]), 0)
    )
    osm_judged = mannitol | ~has
    worst = np.maximum(worst, np.where(osm_judged, sev(osmolality, v["osmolality_warn"], v["osmolality_refuse"]), 0))
    worst = np.maximum(worst, np.where(mannitol, sev(gap, v["osmolar_gap_warn"], v["osmolar_gap_refuse"]), 0))
    worst = np.maximum(worst, np.where(gap < -v["osmolar_gap_negative_warn"] * (1 + 1e-9), 1, 0))
    worst = np.maximum(worst, np.where(mannitol & np.isnan(osmolality), 1, 0))
    rise_judged = has & (na < v["sodium_rise_applies_below"])
    worst = np.maximum(worst, np.where(rise_judged, sev(rise, v["sodium_rise_24h_warn"], rise_refuse), 0))
    # The high end of the range past the refuse limit, where the point is not: a warning.
    range_judged = rise_judged & ~(rise > rise_refuse * (1 + AT))
    rise_high = out["projected_sodium_high"] - na
    worst = np.maximum(worst, np.where(range_judged & (rise_high > rise_refuse * (1 + AT)), 1, 0))
    worst = np.maximum(worst, np.where(has, sev(-rise, v["sodium_fall_24h_warn"], v["sodium_fall_24h_refuse"]), 0))
    for kind, figure in (("g/kg", "solute_g_per_kg"), ("mL/kg", "volume_ml_per_kg"), ("mmol/kg", "sodium_mmol_per_kg")):
        warn = table(f"dose_warn {kind}", np.inf)
        refuse = table(f"dose_refuse {kind}", np.inf)
        worst = np.maximum(worst, sev(out[figure], warn, refuse))
    max_rate = table("max_rate_ml_h")
    worst = np.maximum(worst, np.where(out["rate_ml_h"] > max_rate * (1 + 1e-9), 2, 0))
    peripheral = a["line"] == "peripheral"
    worst = np.maximum(worst, np.where(peripheral & central, 2, 0))
    over = osm_l > v["peripheral_osmolarity_warn"] * (1 + 1e-9)
    worst = np.maximum(worst, np.where(peripheral & ~central & over, 1, 0))
    # The patient and lab rules (osmodose.check.patient_rules).
    ages, lows, highs = (np.asarray(column, dtype=float) for column in zip(*p["weight_for_age"], strict=True))
    worst = np.maximum(worst, np.where(w < np.interp(age, ages, lows) * (1 - AT), 2, 0))
    worst = np.maximum(worst, np.where(w > np.interp(age, ages, highs) * (1 + AT), 2, 0))
    worst = np.maximum(worst, np.where(na < v["hyponatraemia_moderate_warn"] * (1 - AT), 1, 0))
    worst = np.maximum(worst, np.where(a["potassium"] < v["hypokalaemia_severe_warn"] * (1 - AT), 1, 0))
    worst = np.maximum(worst, np.where(~mannitol & (gap > v["osmolar_gap_unexplained_warn"] * (1 + AT)), 1, 0))
    not_hypotonic = out["effective_osmolality"] >= v["hypotonic_effective_osmolality_below"] * (1 - AT)
    hyponatraemic = na < v["sodium_rise_applies_below"] * (1 - AT)
    worst = np.maximum(worst, np.where(has & (rise > 0) & hyponatraemic & not_hypotonic, 1, 0))
    osmolar_rate = out["osmoles_mosm_per_kg"] / np.where(a["duration"] > 0, a["duration"], np.nan)
    hypertonic = osm_l > v["osmolar_rate_applies_above"] * (1 + AT)
    default_rate = has & no_max_rate & hypertonic
    worst = np.maximum(
        worst, np.where(default_rate, sev(osmolar_rate, v["osmolar_rate_warn"], v["osmolar_rate_refuse"]), 0)
    )
    adult = age >= p["adult_age_years"]
    obese = w / (h / 100) ** 2 >= v["bmi_obese_from"] * (1 - AT)
    worst = np.maximum(worst, np.where(has & projects & adult & ~a["use_watson"] & obese, 1, 0))
    worst = np.maximum(worst, np.where(has & adult_only & ~adult, 2, 0))
    out["status"] = worst
    return out


def read_orders(path: str, p: dict[str, Any]) -> dict[str, np.ndarray]:
    """The orders file as canonical numpy columns (polars' reader; units as the synthetic file's header gives)."""
    import polars as pl  # noqa: PLC0415 (the floor only: audit_bench imports this module without it)

    numbers = ["weight[kg]", "age", "height[cm]", "sodium", "potassium", "glucose[mg/dL]", "urea", "osmolality"]
    numbers += ["volume[mL]", "target-rise", "duration[min]"]
    frame = pl.read_csv(path, schema_overrides=dict.fromkeys(numbers, pl.Float64), infer_schema=False)
    n = frame.height

    def column(name: str) -> np.ndarray:
        return frame[name].cast(pl.Float64).to_numpy() if name in frame.columns else np.full(n, np.nan)

    dose = frame["dose"].str.split_exact(" ", 1)
    dose_number = dose.struct.field("field_0").cast(pl.Float64, strict=False).to_numpy()
    dose_unit = dose.struct.field("field_1").fill_null("")
    per_kg = dose_unit.str.ends_with("/kg").to_numpy()
    dose_code = dose_unit.str.replace("/kg", "").replace_strict(UNIT_CODES, default=0, return_dtype=pl.Int8).to_numpy()
    volume, rise = column("volume[mL]"), column("target-rise")
    has_dose = ~np.isnan(dose_number)
    unit_code = np.where(has_dose, dose_code, np.where(~np.isnan(volume), 2, np.where(~np.isnan(rise), 5, 0)))
    amount = np.where(has_dose, dose_number, np.where(~np.isnan(volume), volume, rise))
    ids = {agent["id"]: i for i, agent in enumerate(p["agents"])}
    agent = frame["agent"].replace_strict(ids, default=-1, return_dtype=pl.Int64).to_numpy()
    method = frame["tbw-method"].fill_null("").to_numpy()
    return {
        "weight": column("weight[kg]"),
        "age": column("age"),
        "height": column("height[cm]"),
        "male": (frame["sex"] == "male").to_numpy(),
        "sodium": column("sodium"),
        "potassium": column("potassium"),
        "glucose": column("glucose[mg/dL]") * 10 / p["glucose_g_per_mol"],
        "urea": column("urea"),
        "ethanol": np.full(n, np.nan),
        "osmolality": column("osmolality"),
        "agent_index": agent,
        "amount": amount,
        "per_kg": per_kg & has_dose,
        "unit_code": unit_code,
        "duration": column("duration[min]"),
        "use_watson": np.where(method == "", p["tbw_method"], method) == "watson",
        "line": frame["line"].fill_null("").to_numpy(),
    }


def main(argv: list[str]) -> int:
    import polars as pl  # noqa: PLC0415 (the floor only: audit_bench imports this module without it)

    orders, params, results = argv
    with open(params, encoding="utf-8") as handle:
        p = json.load(handle)
    a = read_orders(orders, p)
    with np.errstate(all="ignore"):
        out = floor(a, p)
    frame = pl.DataFrame(
        {
            "row": np.arange(2, 2 + len(out["status"])),
            "status": out["status"],
            **{name: out[figure] for name, figure in FIGURES},
        }
    )
    frame.write_csv(results)
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
