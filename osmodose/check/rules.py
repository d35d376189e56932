"""Safety rules: each turns figures and limits into a warn/refuse column.

Rules run on whole columns (a check is a batch of one), so an audit row and a
single check get the same findings.  Severity codes: 0 none, 1 warn, 2 refuse;
a figure that could not be computed (NaN) never raises a finding, because the
absence of a figure is shown as such, not as a pass or a fail.  Messages are
built here only, from the rule's template.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np

from osmodose.check.engine import Cases, Figures
from osmodose.formulary.model import Agent, Limits

NONE, WARN, REFUSE = 0, 1, 2
SEVERITY_NAMES = {WARN: "warn", REFUSE: "refuse"}

#: A figure within this relative distance of a limit is at the limit, not above it.  The
#: engine's unit conversions leave a few units in the last place (a 1.5 g/kg order came back
#: as 1.5000000000000004 g/kg for 40.2 kg), which must not cross a limit set at 1.5 g/kg.
LIMIT_RELATIVE_TOLERANCE = 1e-9


@dataclass(frozen=True)
class RuleOutcome:
    """One rule over all cases: severity, the value judged and the limit crossed."""

    code: str
    severity: np.ndarray
    value: np.ndarray
    limit: np.ndarray
    unit: str
    describe: Callable[[float, float, str], str]

    def message(self, row: int) -> str:
        sev = SEVERITY_NAMES[int(self.severity[row])]
        return self.describe(float(self.value[row]), float(self.limit[row]), sev)


def _num(value: float | None) -> float:
    return np.nan if value is None else float(value)


def _past(limit: np.ndarray | float) -> np.ndarray | float:
    """The smallest figure judged above `limit` (infinite and NaN limits stay as they are)."""
    with np.errstate(invalid="ignore"):
        return limit + np.abs(limit) * LIMIT_RELATIVE_TOLERANCE


def threshold(value: np.ndarray, warn: np.ndarray | float, refuse: np.ndarray | float) -> np.ndarray:
    """2 above refuse, 1 above warn, else 0; NaN values and limits give 0.

    Public so every judgement against a limit (check, audit, course) treats a
    figure within rounding of the limit alike: as at the limit, not above it.
    """
    return _severity(value, _past(warn), _past(refuse))


def _severity(value: np.ndarray, warn_past: np.ndarray | float, refuse_past: np.ndarray | float) -> np.ndarray:
    """`threshold` with the limits already moved past by the tolerance."""
    with np.errstate(invalid="ignore"):
        refused = value > refuse_past  # NaN compares False: no finding
        severity = (value > warn_past).astype(np.int8)
    severity[refused] = REFUSE
    return severity


def _limit_of(severity: np.ndarray, warn: np.ndarray | float, refuse: np.ndarray | float) -> np.ndarray:
    return np.asarray(np.where(severity == REFUSE, refuse, warn), dtype=float)


def shown(value: float, limit: float) -> str:
    """`value` to one decimal, or to as many as it takes not to print the limit itself.

    "310.0 is above the limit of 310" reads as a contradiction; "310.04" does not.
    """
    for digits in (1, 2, 3, 4):
        text = f"{value:.{digits}f}"
        if float(text) != limit:
            return text
    return f"{value:.6g}"


def _above(what: str, unit: str) -> Callable[[float, float, str], str]:
    def describe(value: float, limit: float, severity: str) -> str:
        return f"{what} {shown(value, limit)} {unit} is above the {severity} limit of {limit:g} {unit}"

    return describe


def _below(what: str, unit: str) -> Callable[[float, float, str], str]:
    def describe(value: float, limit: float, severity: str) -> str:
        return f"{what} {shown(value, limit)} {unit} is below the {severity} limit of {limit:g} {unit}"

    return describe


def _negative_gap(value: float, limit: float, _severity: str) -> str:
    return (
        f"osmolar gap {shown(value, limit)} mOsm/kg: measured osmolality is more than {-limit:g} below the "
        "calculated one; check the units of glucose and urea, and the sample"
    )


#: High risk of osmotic demyelination (Verbalis JG et al. Am J Med 2013): sodium
#: of 105 mmol/L or below, or hypokalaemia (below 3.5 mmol/L, common practice).
HIGH_RISK_SODIUM = 105.0
HIGH_RISK_POTASSIUM = 3.5


def _threshold_rule(
    code: str,
    what: str,
    unit: str,
    value: np.ndarray,
    warn: np.ndarray | float,
    refuse: np.ndarray | float,
    applies: np.ndarray,
) -> RuleOutcome:
    severity = np.where(applies, threshold(value, warn, refuse), NONE).astype(np.int8)
    return RuleOutcome(code, severity, value, _limit_of(severity, warn, refuse), unit, _above(what, unit))


def _below_rule(
    code: str,
    what: str,
    unit: str,
    value: np.ndarray,
    warn: float,
    refuse: float,
    applies: np.ndarray,
    describe: Callable[[float, float, str], str] | None = None,
) -> RuleOutcome:
    """A lower limit: the same threshold on the negated figure."""
    severity = np.where(applies, threshold(-value, -warn, -refuse), NONE).astype(np.int8)
    return RuleOutcome(code, severity, value, _limit_of(severity, warn, refuse), unit, describe or _below(what, unit))


def _unknown_osmolality_rule(osmolality: np.ndarray, is_mannitol: np.ndarray) -> RuleOutcome:
    """Mannitol with no osmolality at all: its safety checks cannot run, so say so."""
    severity = np.where(is_mannitol & np.isnan(osmolality), WARN, NONE).astype(np.int8)

    def describe(_value: float, _limit: float, _severity: str) -> str:
        return (
            "mannitol ordered with no serum osmolality (measured, or sodium, glucose and urea to calculate it): "
            "the osmolality hold cannot be checked"
        )

    nan = np.full(np.shape(osmolality), np.nan)
    return RuleOutcome("osmolality-unknown", severity, nan, nan, "mOsm/kg", describe)


def _agent_column(agents: Sequence[Agent], index: np.ndarray, pick: Callable[[Agent], float | None]) -> np.ndarray:
    """The agent property of each case; `index` is -1 (no agent, NaN) or an index into `agents`.

    Index -1 picks the table's last entry, the NaN appended for "no agent".
    """
    table = np.asarray([_num(pick(a)) for a in agents] + [np.nan], dtype=float)
    return table[index]


_DOSE_FIGURE = {
    "g/kg": ("solute_g_per_kg", "dose"),
    "mL/kg": ("volume_ml_per_kg", "volume"),
    "mmol/kg": ("sodium_mmol_per_kg", "sodium dose"),
    "mOsm/kg": ("osmoles_mosm_per_kg", "osmolar dose"),
}


def evaluate(
    cases: Cases, figures: Figures, agents: Sequence[Agent], limits: Limits, line: np.ndarray
) -> list[RuleOutcome]:
    """Every rule over every case; `line` holds "", "central" or "peripheral" per case."""
    index = np.asarray(cases.agent_index, dtype=np.int64)
    has_agent = index >= 0
    sodium = cases.sodium.m_as("mmol/L")
    rise = figures.projected_rise
    # Fluids that lower sodium (5 % glucose in hypernatraemia) are what a high
    # sodium calls for: the ceilings judge orders that raise sodium or osmolality.
    with np.errstate(invalid="ignore"):
        not_lowering = ~(rise < 0)  # NaN compares False: judged
    measured = cases.osmolality.m_as("mOsm/kg")
    osmolality = np.where(np.isnan(measured), figures.calculated_osmolality, measured)
    is_mannitol = np.asarray([a.solute == "mannitol" for a in agents] + [False])[index]  # -1: the False
    lowering = has_agent & ~not_lowering
    # The 24 h rise limits come from correcting chronic hyponatraemia: they protect a
    # brain adapted to a low sodium. Osmotherapy from a normal sodium is judged by the
    # sodium ceilings instead.
    rise_applies = has_agent & (sodium < _num(limits.get("sodium_rise_applies_below")))
    potassium = cases.potassium.m_as("mmol/L")
    with np.errstate(invalid="ignore"):
        high_risk = (sodium <= HIGH_RISK_SODIUM) | (potassium < HIGH_RISK_POTASSIUM)
    rise_refuse = np.where(
        high_risk,
        np.fmin(_num(limits.get("sodium_rise_24h_refuse")), _num(limits.get("sodium_rise_24h_high_risk_refuse"))),
        _num(limits.get("sodium_rise_24h_refuse")),
    )
    gap = figures.osmolar_gap
    outcomes = [
        _threshold_rule(
            "sodium-high",
            "serum sodium",
            "mmol/L",
            sodium,
            _num(limits.get("sodium_warn")),
            _num(limits.get("sodium_refuse")),
            not_lowering,
        ),
        _threshold_rule(
            "projected-sodium-high",
            "projected sodium",
            "mmol/L",
            figures.projected_sodium,
            _num(limits.get("sodium_warn")),
            _num(limits.get("sodium_refuse")),
            has_agent & not_lowering,
        ),
        _below_rule(
            "projected-sodium-low",
            "projected sodium",
            "mmol/L",
            figures.projected_sodium,
            _num(limits.get("sodium_low_warn")),
            _num(limits.get("sodium_low_refuse")),
            lowering,
        ),
        # Hinson 2013: hold mannitol above 320. For hypertonic saline the sodium
        # ceilings govern (urea and glucose would otherwise refuse a saline bolus
        # to a patient inside the 145-160 sodium target).
        _threshold_rule(
            "osmolality-high",
            "serum osmolality",
            "mOsm/kg",
            osmolality,
            _num(limits.get("osmolality_warn")),
            _num(limits.get("osmolality_refuse")),
            is_mannitol | ~has_agent,
        ),
        _threshold_rule(
            "osmolar-gap-high",
            "osmolar gap",
            "mOsm/kg",
            gap,
            _num(limits.get("osmolar_gap_warn")),
            _num(limits.get("osmolar_gap_refuse")),
            is_mannitol,
        ),
        _below_rule(
            "osmolar-gap-negative",
            "osmolar gap",
            "mOsm/kg",
            gap,
            -_num(limits.get("osmolar_gap_negative_warn")),
            -np.inf,
            np.ones_like(has_agent),
            _negative_gap,
        ),
        _unknown_osmolality_rule(osmolality, is_mannitol),
        _threshold_rule(
            "sodium-rise-24h",
            "projected sodium rise from this order",
            "mmol/L",
            rise,
            _num(limits.get("sodium_rise_24h_warn")),
            rise_refuse,
            rise_applies,
        ),
        _threshold_rule(
            "sodium-fall-24h",
            "projected sodium fall from this order",
            "mmol/L",
            -rise,
            _num(limits.get("sodium_fall_24h_warn")),
            _num(limits.get("sodium_fall_24h_refuse")),
            has_agent,
        ),
    ]
    outcomes.extend(_dose_rules(figures, agents, index))
    outcomes.append(_max_rate_rule(figures, agents, index))
    outcomes.extend(_line_rules(agents, index, line, limits))
    return outcomes


def _agent_table(agents: Sequence[Agent], pick: Callable[[Agent], float | None], missing: float) -> np.ndarray:
    """One entry per agent, `missing` where the agent has none, and `missing` last for index -1 (no agent)."""
    return np.asarray([missing if (v := pick(a)) is None else float(v) for a in agents] + [missing], dtype=float)


def _dose_rules(figures: Figures, agents: Sequence[Agent], index: np.ndarray) -> list[RuleOutcome]:
    """Per-kg dose against the agent's own limits, in whichever unit the limit is written.

    Limits are looked up per agent and then gathered per case, so the tolerance
    and the missing limits (no limit: never above) cost a table, not a column.
    """
    outcomes = []
    present = np.zeros(len(agents) + 1, dtype=bool)
    present[index] = True
    for kind, (attribute, what) in _DOSE_FIGURE.items():
        warn = _agent_table(agents, lambda a, k=kind: d.value if (d := a.dose_warn) and d.kind == k else None, np.inf)
        refuse = _agent_table(
            agents, lambda a, k=kind: d.value if (d := a.dose_refuse) and d.kind == k else None, np.inf
        )
        if np.all(np.isinf(warn[present])) and np.all(np.isinf(refuse[present])):
            continue  # no case in this batch has a limit of this kind
        value = getattr(figures, attribute)
        severity = _severity(value, _past(warn)[index], _past(refuse)[index])
        limit = np.stack([warn, warn, refuse])[severity, index]
        outcomes.append(RuleOutcome("dose-per-kg", severity, value, limit, kind, _dose_describe(what, kind)))
    return outcomes


def _dose_describe(what: str, unit: str) -> Callable[[float, float, str], str]:
    def describe(value: float, limit: float, severity: str) -> str:
        return f"{what} {value:.2f} {unit} is above the agent's {severity} limit of {limit:g} {unit}"

    return describe


def _max_rate_rule(figures: Figures, agents: Sequence[Agent], index: np.ndarray) -> RuleOutcome:
    table = _agent_table(agents, lambda a: a.max_rate_ml_h, np.nan)
    limit = table[index]
    severity = _severity(figures.rate_ml_h, np.inf, _past(table)[index])

    def describe(value: float, maximum: float, _severity: str) -> str:
        return f"rate {value:.0f} mL/h is faster than the agent's maximum of {maximum:g} mL/h"

    return RuleOutcome("rate-too-fast", severity, figures.rate_ml_h, limit, "mL/h", describe)


def _line_rules(agents: Sequence[Agent], index: np.ndarray, line: np.ndarray, limits: Limits) -> list[RuleOutcome]:
    peripheral = line == "peripheral"
    central_only = _agent_column(agents, index, lambda a: 1.0 if a.route == "central" else 0.0) == 1.0
    refused = np.where(peripheral & central_only, REFUSE, NONE).astype(np.int8)
    osmolarity = _agent_column(agents, index, lambda a: a.osmolarity_mosm_l)
    warn = _num(limits.get("peripheral_osmolarity_warn"))
    warned = np.where(peripheral & ~central_only, threshold(osmolarity, warn, np.inf), NONE).astype(np.int8)

    def central(value: float, _limit: float, _severity: str) -> str:
        return f"this agent ({value:.0f} mOsm/L) is for a central line only and is ordered peripheral"

    return [
        RuleOutcome("central-line-only", refused, osmolarity, np.full(np.shape(osmolarity), np.nan), "mOsm/L", central),
        RuleOutcome(
            "peripheral-osmolarity",
            warned,
            osmolarity,
            np.full(np.shape(osmolarity), warn),
            "mOsm/L",
            _above("infusate osmolarity on a peripheral line", "mOsm/L"),
        ),
    ]
