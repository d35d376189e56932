"""How a course figure is judged against a limit, shared by every course rule.

Every comparison goes through `osmodose.check.rules.threshold`, the one a check
uses, so a figure within rounding of a limit (1e-9 relative) is at the limit
in a course review exactly as in `osmodose check`.  A figure that cannot be
computed (NaN) and a limit the unit does not set (None) never fire.
"""

from __future__ import annotations

from datetime import datetime

import numpy as np

from osmodose.check.results import Finding
from osmodose.check.rules import SEVERITY_NAMES, threshold


class CourseFinding(Finding):
    """A finding with the time of the entry it is about."""

    time: datetime | None = None


def when(moment: datetime) -> str:
    """A time as shown everywhere: ISO 8601 to the minute, with its offset."""
    return moment.isoformat(timespec="minutes")


def _limit(limit: float | np.ndarray | None) -> float | np.ndarray:
    return np.nan if limit is None else limit


def severities(
    values: np.ndarray, warn: float | np.ndarray | None, refuse: float | np.ndarray | None, below: bool = False
) -> np.ndarray:
    """0 none, 1 warn, 2 refuse for each value: above the limits, or (`below`) under them."""
    values = np.asarray(values, dtype=float)
    warn, refuse = _limit(warn), _limit(refuse)
    if below:  # value < limit  <=>  -value > -limit, with the same tolerance
        return threshold(-values, -np.asarray(warn, dtype=float), -np.asarray(refuse, dtype=float))
    return threshold(values, warn, refuse)


def severity_of(value: float, warn: float | None, refuse: float | None, below: bool = False) -> str | None:
    """The severity of one figure: "refuse", "warn" or None."""
    code = int(severities(np.asarray([value]), warn, refuse, below)[0])
    return SEVERITY_NAMES.get(code)


def limit_crossed(severity: str, warn: float | None, refuse: float | None) -> float | None:
    return refuse if severity == "refuse" else warn


def count_crossing(values: np.ndarray, limit: float | None, below: bool = False) -> int:
    """How many figures are beyond `limit` (at the limit, within rounding, is not beyond)."""
    if limit is None:
        return 0
    return int(np.count_nonzero(severities(values, limit, None, below)))


def worst(severity: np.ndarray, value: np.ndarray) -> int:
    """Index of the worst instance: the most severe, then the largest figure among those."""
    order = np.lexsort((np.nan_to_num(np.asarray(value, dtype=float), nan=-np.inf), severity))
    return int(order[-1])


__all__ = ["CourseFinding", "count_crossing", "limit_crossed", "severities", "severity_of", "when", "worst"]
