"""A sodium change past its limit, measured or projected: one judgement and one wording for every window.

The 24 h rules (`course.sodium_rules`) and the 48 h and later-day rules
(`course.multi_day`) declare their changes as rows; the rows are judged and
worded here, so a rise over 48 h reads like a rise over 24 h.

* `MeasuredChange`: the changes into each lab over a window (`timeline.WindowChange`),
  judged through `check.judging.threshold`; the worst past a limit is the finding.
* `ProjectedChange`: a projected sodium against a lab measured before it, judged
  through `check.judging.severity_of` (`course.judging.past_limit`).
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime
from typing import Literal

import numpy as np

from osmodose.check.judging import (
    HIGH_RISK_POTASSIUM_BELOW,
    HIGH_RISK_SODIUM_AT_MOST,
    SEVERITY_NAMES,
    threshold,
    worst_index,
)
from osmodose.course.judging import CourseFinding, crossing_count, past_limit, when
from osmodose.course.timeline import LabColumns, WindowChange

HIGH_RISK_WORDS = (
    f"high risk of osmotic demyelination: sodium {HIGH_RISK_SODIUM_AT_MOST:g} mmol/L or below, "
    f"or potassium below {HIGH_RISK_POTASSIUM_BELOW:g} mmol/L, within 48 h"
)


def _at(limit: np.ndarray | float | None, j: int) -> float:
    """A limit at lab `j`: the same for every lab, or one per lab; NaN for none."""
    column = np.asarray(np.nan if limit is None else limit, dtype=float)
    return float(column if column.ndim == 0 else column[j])


@dataclass(frozen=True)
class MeasuredChange:
    """The sodium changes into each lab over a window, the limits they are judged by, and where those apply."""

    code: str
    window: WindowChange
    within: str  # the window, in words ("24 h", "48 h", ...)
    applies: np.ndarray | bool
    warn: np.ndarray | float | None
    refuse: np.ndarray | float | None
    falling: bool = False  # the falls of the window, rather than its rises
    high_risk: np.ndarray | None = None  # per lab: the refuse limit in force is the high-risk one (said)
    counted: bool = False  # say how many labs crossed a limit

    def findings(self, labs: LabColumns) -> list[CourseFinding]:
        """The worst change past a limit (the most severe, then the largest), with the labs it is between."""
        change = self.window.fall if self.falling else self.window.rise
        severity = np.where(self.applies, threshold(change, self.warn, self.refuse), 0)
        if not np.any(severity):
            return []
        j = worst_index(severity, change)
        name = SEVERITY_NAMES[int(severity[j])]
        limit = _at(self.refuse if name == "refuse" else self.warn, j)
        value = float(change[j])
        i = int((self.window.high_index if self.falling else self.window.low_index)[j])
        message = (
            f"measured sodium {'fell' if self.falling else 'rose'} {value:.1f} mmol/L within {self.within} (from "
            f"{labs.sodium[i]:.1f} at {when(labs.times[i])} to {labs.sodium[j]:.1f} at {when(labs.times[j])}), "
            f"above the {name} limit of {limit:g} mmol/L"
            + (f" ({HIGH_RISK_WORDS})" if self.high_risk is not None and self.high_risk[j] else "")
            + (crossing_count(int(np.count_nonzero(severity)), len(labs.t), "labs") if self.counted else "")
        )
        return [
            CourseFinding(
                code=self.code,
                severity=name,
                message=message,
                value=value,
                limit=limit,
                unit="mmol/L",
                time=labs.times[j],
            )
        ]


@dataclass(frozen=True)
class ProjectedChange:
    """A projected sodium's change from a lab measured before it, over a window, and the limits it is judged by."""

    code: str
    start: int  # the lab the change is from
    limits: tuple[float | None, float | None]  # (warn, refuse)
    within: str  # the window, in words
    direction: Literal["above", "below"] = "above"  # a rise from the lab, or a fall
    high_risk: bool = False  # the refuse limit in force is the high-risk one (said)

    def findings(self, labs: LabColumns, what: str, sodium: float, at: datetime) -> list[CourseFinding]:
        """The change of `sodium` (`what`, projected at `at`) from the lab, when it crosses a limit."""
        measured = float(labs.sodium[self.start])
        change = sodium - measured if self.direction == "above" else measured - sodium

        def words(severity: str, limit: float) -> str:
            return (
                f"{what} {sodium:.1f} mmol/L is {change:.1f} {self.direction} the {measured:.1f} measured at "
                f"{when(labs.times[self.start])}, above the {severity} limit of {limit:g} mmol/L in {self.within}"
                + (f" ({HIGH_RISK_WORDS})" if self.high_risk else "")
            )

        return past_limit(self.code, change, self.limits, "mmol/L", at, words)
