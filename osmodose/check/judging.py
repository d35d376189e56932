"""How any figure is judged against a limit: the helpers every rule shares, in a check and across a course.

A check, an audit row, `course show` and `course plan` all compare through
`threshold`, so a figure within rounding of a limit (1e-9 relative) is at the
limit everywhere, never above it.  A figure that cannot be computed (NaN) and
a limit the unit does not set (None or NaN) never fire: the absence of a
figure is shown as such, not as a pass or a fail.  The other helpers are the
choices every rule makes the same way: which osmolality is judged, which
patients are at high risk of osmotic demyelination, which 24 h rise limits are
in force, and the worst status of a set of findings.
"""

from __future__ import annotations

from collections.abc import Iterable
from typing import Literal

import numpy as np

from osmodose.science.formulas import RELATIVE_NOISE

Severity = Literal["warn", "refuse"]
Status = Literal["ok", "warn", "refuse"]

NONE, WARN, REFUSE = 0, 1, 2
SEVERITY_NAMES: dict[int, Severity] = {WARN: "warn", REFUSE: "refuse"}

#: A figure within this relative distance of a limit is at the limit, not above it (arithmetic noise).
LIMIT_RELATIVE_TOLERANCE = RELATIVE_NOISE

#: High risk of osmotic demyelination (Verbalis JG et al. Am J Med 2013;126:S1-42): sodium of
#: 105 mmol/L or below, or hypokalaemia, potassium below 3.5 mmol/L (the usual lower limit of
#: normal, common practice).
HIGH_RISK_SODIUM_AT_MOST = 105.0
HIGH_RISK_POTASSIUM_BELOW = 3.5

Limit = float | np.ndarray | None


def _as_limit(limit: Limit) -> float | np.ndarray:
    return np.nan if limit is None else limit


def _past(limit: float | np.ndarray) -> float | np.ndarray:
    """The smallest figure judged above `limit` (infinite and NaN limits stay as they are)."""
    with np.errstate(invalid="ignore"):
        return limit + np.abs(limit) * LIMIT_RELATIVE_TOLERANCE


def threshold(value: np.ndarray, warn: Limit, refuse: Limit) -> np.ndarray:
    """Per figure: REFUSE above `refuse`, WARN above `warn`, else NONE; NaN figures and limits give NONE."""
    value = np.asarray(value, dtype=float)
    with np.errstate(invalid="ignore"):
        refused = value > _past(_as_limit(refuse))  # NaN compares False: no finding
        severity = (value > _past(_as_limit(warn))).astype(np.int8)
    severity = np.atleast_1d(severity)
    severity[np.atleast_1d(refused)] = REFUSE
    return severity.reshape(np.shape(value))


def threshold_below(value: np.ndarray, warn: Limit, refuse: Limit) -> np.ndarray:
    """`threshold` for a lower limit: a figure under it fires (the same tolerance, mirrored)."""
    negate = lambda limit: None if limit is None else -np.asarray(limit, dtype=float)  # noqa: E731
    return threshold(-np.asarray(value, dtype=float), negate(warn), negate(refuse))


def severity_of(value: float, warn: Limit, refuse: Limit, below: bool = False) -> Severity | None:
    """The severity of one figure: "refuse", "warn" or None."""
    judge = threshold_below if below else threshold
    return SEVERITY_NAMES.get(int(judge(np.asarray([value], dtype=float), warn, refuse)[0]))


def limit_crossed(severity: Severity, warn: float | None, refuse: float | None) -> float | None:
    """The limit a finding of `severity` crossed."""
    return refuse if severity == "refuse" else warn


def count_crossing(values: np.ndarray, limit: float | None, below: bool = False) -> int:
    """How many figures are beyond `limit` (at the limit, within rounding, is not beyond)."""
    if limit is None:
        return 0
    judge = threshold_below if below else threshold
    return int(np.count_nonzero(judge(values, limit, None)))


def worst_status(severities: Iterable[str]) -> Status:
    """The status a set of findings gives: refuse if any refuses, warn if any warns, else ok."""
    seen = set(severities)
    return "refuse" if "refuse" in seen else ("warn" if "warn" in seen else "ok")


def worst_index(severity: np.ndarray, value: np.ndarray) -> int:
    """Index of the worst instance: the most severe, then the largest figure among those."""
    order = np.lexsort((np.nan_to_num(np.asarray(value, dtype=float), nan=-np.inf), severity))
    return int(order[-1])


def judged_osmolality(measured: np.ndarray, calculated: np.ndarray) -> np.ndarray:
    """The osmolality the limits judge: measured where there is one, else calculated."""
    measured = np.asarray(measured, dtype=float)
    return np.where(np.isnan(measured), calculated, measured)


def high_risk(sodium: np.ndarray, potassium: np.ndarray) -> np.ndarray:
    """High risk of osmotic demyelination from the labs (an unknown potassium is not hypokalaemia)."""
    with np.errstate(invalid="ignore"):
        return (np.asarray(sodium) <= HIGH_RISK_SODIUM_AT_MOST) | (np.asarray(potassium) < HIGH_RISK_POTASSIUM_BELOW)


def rise_limits(
    applies_below: float | None,
    warn: float | None,
    refuse: float | None,
    high_risk_refuse: float | None,
    lowest_sodium: np.ndarray,
    at_high_risk: np.ndarray,
) -> tuple[np.ndarray, float, np.ndarray]:
    """Whether the 24 h rise limits apply, the warn limit and the refuse limit in force.

    The rise limits protect a brain adapted to a low sodium (chronic
    hyponatraemia), so they apply when the starting (or lowest recent) sodium is
    below `applies_below`; a unit that sets none has them apply always.  At high
    risk the refuse limit is the smaller of the usual and the high-risk one (the
    high-risk limit never loosens the usual one; a missing one gives way).
    """
    lowest = np.asarray(lowest_sodium, dtype=float)
    if applies_below is None:
        applies = np.ones(np.shape(lowest), dtype=bool)
    else:
        applies = threshold_below(lowest, applies_below, None) > 0
    usual = np.nan if refuse is None else float(refuse)
    risky = np.nan if high_risk_refuse is None else float(high_risk_refuse)
    with np.errstate(invalid="ignore"):
        refuse_in_force = np.where(at_high_risk, np.fmin(usual, risky), usual)
    return applies, np.nan if warn is None else float(warn), np.asarray(refuse_in_force, dtype=float)
