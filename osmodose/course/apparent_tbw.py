"""The total body water the patient's own measured responses imply: the projection learning from the patient.

Between two measured sodiums, the doses given (and the urine recorded with its
sodium) are a mass balance whose one unknown is total body water (Barsoum NR,
Levine BS. Nephrol Dial Transplant 2002;17:1176):

    TBW = [(Na+K)_in - (Na+K)_out - Na_after (V_in - V_out)] / (Na_after - Na_before)

(`formulas.apparent_tbw`; for one dose alone V (C - Na_after) / (Na_after -
Na_before)).  A response larger than predicted gives a smaller apparent TBW:
water passed that the balance does not see (aquaresis, the cause of most
overcorrection: Mohmand HK et al. Clin J Am Soc Nephrol 2007) shows up here.

An interval between two consecutive labs is used when every dose in it
projects sodium (no mannitol, which the balance does not model), every dose
ended before the second lab, and sodium moved by more than the measurement
error (`projection_sodium_error`); otherwise it says why not.  Urine recorded
without its sodium cannot enter the balance and is left out, with a word.
The combined estimate weights each interval by the size of its sodium change
(the measurement error weighs least on the largest changes).
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from osmodose.check.judging import severity_of
from osmodose.course.judging import CourseFinding, past_limit, when
from osmodose.course.projection import losses_between
from osmodose.course.timeline import Timeline
from osmodose.formulary.model import Limits
from osmodose.science import formulas as f


@dataclass(frozen=True)
class Interval:
    """Two consecutive labs and the doses started between them."""

    lab_from: int
    lab_to: int
    dose_rows: tuple[int, ...]
    sodium_before: float
    sodium_after: float
    urine_out_ml: float
    """Urine recorded with its sodium between the labs, taken out by the balance."""
    apparent_tbw_l: float | None
    reason: str | None
    """Why there is no estimate, or what was left out of it; None when nothing needs saying."""


@dataclass(frozen=True)
class ApparentTbw:
    """Every interval's estimate and the combined one, beside the estimated TBW."""

    estimated_tbw_l: float
    intervals: tuple[Interval, ...]
    combined_l: float | None

    @property
    def share_percent(self) -> float | None:
        """The combined apparent TBW as a share of the estimate."""
        return None if self.combined_l is None else 100.0 * self.combined_l / self.estimated_tbw_l

    def for_dose(self, row: int) -> float | None:
        """The apparent TBW of the interval a dose was given in (None when that interval has none)."""
        for interval in self.intervals:
            if row in interval.dose_rows:
                return interval.apparent_tbw_l
        return None


def _interval(timeline: Timeline, i: int, limits: Limits) -> Interval | None:
    labs, doses = timeline.labs, timeline.doses
    t_from, t_to = float(labs.t[i]), float(labs.t[i + 1])
    rows = np.flatnonzero((doses.t >= t_from) & (doses.t < t_to))
    if not len(rows):
        return None
    before, after = float(labs.sodium[i]), float(labs.sodium[i + 1])
    losses = losses_between(timeline.outputs, t_from, t_to)
    base = Interval(
        lab_from=i,
        lab_to=i + 1,
        dose_rows=tuple(int(r) for r in rows),
        sodium_before=before,
        sodium_after=after,
        urine_out_ml=losses.volume_ml,
        apparent_tbw_l=None,
        reason=None,
    )
    error = limits.projection_sodium_error or 0.0
    reason = None
    if np.any(~doses.agent.projects_sodium[rows]):
        reason = "mannitol given between the labs: the balance does not model it"
    elif np.any(doses.t_end[rows] > t_to):
        reason = "a dose was still running at the second lab"
    elif abs(after - before) <= error:
        reason = f"sodium moved {after - before:+.1f} mmol/L, within the measurement error of +/-{error:g}"
    if reason is not None:
        return replace(base, reason=reason)
    litres = doses.volume_ml[rows] / f.ML_PER_L
    estimate = float(
        f.apparent_tbw(
            before,
            after,
            float(np.sum(litres * doses.agent.cations_mmol_l[rows])),
            float(np.sum(litres)),
            float(np.sum(losses.volume_l * losses.cations_mmol_l)),
            float(np.sum(losses.volume_l)),
        )
    )
    if not estimate > 0:
        return replace(base, reason="sodium moved against what the balance predicts")
    left_out = losses.unknown
    note = f"{left_out} urine output{'s' if left_out > 1 else ''} without a sodium left out" if left_out else None
    return replace(base, apparent_tbw_l=estimate, reason=note)


def apparent_tbw(timeline: Timeline, tbw_l: float, limits: Limits) -> ApparentTbw:
    """The apparent TBW of every interval between consecutive labs with doses, and their weighted mean."""
    intervals = [x for i in range(len(timeline.labs.t) - 1) if (x := _interval(timeline, i, limits)) is not None]
    used = [x for x in intervals if x.apparent_tbw_l is not None]
    weights = [abs(x.sodium_after - x.sodium_before) for x in used]
    combined = None
    if used:
        combined = float(np.average([x.apparent_tbw_l for x in used], weights=weights))
    return ApparentTbw(estimated_tbw_l=tbw_l, intervals=tuple(intervals), combined_l=combined)


def apparent_tbw_findings(result: ApparentTbw, timeline: Timeline, limits: Limits) -> list[CourseFinding]:
    """The lowest interval's apparent TBW, as a share of the estimate, below `apparent_tbw_low_warn` (warn)."""
    limit = limits.apparent_tbw_low_warn
    used = [x for x in result.intervals if x.apparent_tbw_l is not None]
    if limit is None or not used:
        return []
    shares = [100.0 * (x.apparent_tbw_l or 0.0) / result.estimated_tbw_l for x in used]
    low = [k for k, share in enumerate(shares) if severity_of(share, limit, None, below=True) is not None]
    if not low:
        return []
    k = min(low, key=lambda j: shares[j])
    worst = used[k]
    labs, doses = timeline.labs, timeline.doses
    given = ", ".join(f"{doses.agent_ids[r]} {doses.volume_ml[r]:g} mL" for r in worst.dose_rows)
    count = f" ({len(low)} of {len(used)} intervals below it)" if len(used) > 1 else ""

    def words(_severity: str, limit: float) -> str:
        return (
            f"sodium {worst.sodium_before:.1f} at {when(labs.times[worst.lab_from])} to {worst.sodium_after:.1f} at "
            f"{when(labs.times[worst.lab_to])} after {given} implies a total body water of "
            f"{worst.apparent_tbw_l:.1f} L, {shares[k]:.0f} % of the estimated {result.estimated_tbw_l:.1f} L, below "
            f"the warn limit of {limit:g} %: a response much larger than predicted (aquaresis likely); "
            "re-measure sodium early and watch the urine output" + count
        )

    return past_limit("apparent-tbw-low", shares[k], (limit, None), "%", labs.times[worst.lab_to], words, below=True)
