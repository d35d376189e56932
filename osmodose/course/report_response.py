"""The parts of a course's report about the patient's own response: text and JSON, laid out once.

Urine outputs in the timeline, the apparent total body water per dose and
combined, the ICP response per dose (and per agent), and for a plan the two
projections (estimated and apparent TBW) and the overcorrection rescue.  The
figures come from `apparent_tbw`, `icp_response`, `plan` and `rescue`;
nothing is computed here.
"""

from __future__ import annotations

from typing import Any

from osmodose.check.report import volume_text
from osmodose.course.apparent_tbw import ApparentTbw
from osmodose.course.episode import Episode
from osmodose.course.icp_response import IcpResponse, by_agent, response_text
from osmodose.course.judging import when
from osmodose.course.plan import Plan
from osmodose.course.rescue import Rescue
from osmodose.course.timeline import Timeline


def output_rows(episode: Episode, timeline: Timeline) -> list[tuple[float, str, str]]:
    """(seconds, time, details) of each urine output, for the timeline."""
    rows = []
    for j, output in enumerate(episode.outputs):
        text = f"urine {output.volume_ml:g} mL"
        if output.over_min:
            text += f" over {output.over_min / 60:g} h" if output.over_min >= 60 else f" over {output.over_min:g} min"
        if output.sodium_mmol_l is not None:
            text += f"  Na {output.sodium_mmol_l:g}"
            text += (
                f"  K {output.potassium_mmol_l:g}" if output.potassium_mmol_l is not None else "  K n/a (taken as 0)"
            )
        else:
            text += "  (no urine sodium: not in the balance)"
        rows.append((float(timeline.outputs.t[j]), when(output.time), text))
    return rows


def dose_details(row: int, apparent: ApparentTbw | None, icp: dict[int, IcpResponse]) -> str:
    """What the timeline adds to a dose: the apparent TBW its interval implies, and its ICP response."""
    text = ""
    value = apparent.for_dose(row) if apparent is not None else None
    if value is not None and apparent is not None:
        text += f"  apparent TBW {value:.1f} L ({100 * value / apparent.estimated_tbw_l:.0f} %)"
    if row in icp:
        text += "  " + response_text(icp[row])
    return text


def apparent_lines(apparent: ApparentTbw | None) -> list[str]:
    """The combined apparent TBW beside the estimate, for `course show`."""
    if apparent is None or not apparent.intervals:
        return []
    if apparent.combined_l is None:
        reasons = "; ".join(sorted({x.reason for x in apparent.intervals if x.reason}))
        return [f"apparent total body water: n/a ({reasons})"]
    used = sum(1 for x in apparent.intervals if x.apparent_tbw_l is not None)
    return [
        f"apparent total body water: {apparent.combined_l:.1f} L, {apparent.share_percent:.0f} % of the estimated "
        f"{apparent.estimated_tbw_l:.1f} L (from {used} interval{'s' if used > 1 else ''} between labs, "
        "weighted by the sodium change)"
    ]


def icp_lines(responses: list[IcpResponse], agent_ids: tuple[str, ...]) -> list[str]:
    """ICP falls per agent, in dose order: does this patient still respond, and to which agent?"""
    falls = by_agent(responses, agent_ids)
    if not falls:
        return []
    items = "; ".join(
        f"{agent} " + ", ".join(f"{x:+.0f}" for x in (-v for v in values)) for agent, values in falls.items()
    )
    return [f"ICP change after each dose (lowest within the window, mmHg): {items}"]


def apparent_json(apparent: ApparentTbw | None, timeline: Timeline) -> dict[str, Any] | None:
    if apparent is None:
        return None
    labs = timeline.labs
    return {
        "apparent_tbw_l": apparent.combined_l,
        "estimated_tbw_l": apparent.estimated_tbw_l,
        "share_of_estimate_percent": apparent.share_percent,
        "intervals": [
            {
                "from_lab_time": when(labs.times[x.lab_from]),
                "to_lab_time": when(labs.times[x.lab_to]),
                "sodium_before_mmol_l": x.sodium_before,
                "sodium_after_mmol_l": x.sodium_after,
                "doses": [timeline.doses.agent_ids[r] for r in x.dose_rows],
                "urine_out_ml": x.urine_out_ml,
                "apparent_tbw_l": x.apparent_tbw_l,
                "note": x.reason,
            }
            for x in apparent.intervals
        ],
    }


def icp_json(response: IcpResponse | None) -> dict[str, Any] | None:
    if response is None:
        return None
    return {
        "before_mmhg": response.before_mmhg,
        "before_time": None if response.before_time is None else when(response.before_time),
        "lowest_after_mmhg": response.lowest_mmhg,
        "lowest_after_time": None if response.lowest_time is None else when(response.lowest_time),
        "fall_mmhg": response.fall_mmhg,
        "threshold_mmhg": response.threshold_mmhg,
        "at_or_below_threshold_h": response.below_h,
        "at_or_below_threshold_at_least": response.below_at_least,
    }


def plan_projection_lines(plan: Plan) -> list[str]:
    """With an apparent TBW: the sodium after the dose both ways, and which one is judged."""
    if len(plan.variants) < 2:
        return []
    lines = []
    for variant in plan.variants:
        after = variant.check.projected_sodium_mmol_l
        judged = "  <- judged" if variant.basis == plan.judged_on else ""
        lines.append(
            f"  with the {variant.basis} total body water ({variant.tbw_l:.1f} L): "
            f"{variant.projection.sodium_now:.1f} -> " + ("n/a" if after is None else f"{after:.1f} mmol/L") + judged
        )
    return lines


def rescue_lines(rescue: Rescue | None) -> list[str]:
    if rescue is None:
        return []
    items = ", ".join(f"{v.agent} {volume_text(v.volume_ml)}" for v in rescue.volumes) or "none in the formulary"
    return [
        f"overcorrection: measured sodium rose {rescue.measured_rise_mmol_l:.1f} mmol/L within 24 h (from "
        f"{rescue.lowest_sodium_mmol_l:.1f} at {when(rescue.lowest_time)} to {rescue.latest_sodium_mmol_l:.1f} at "
        f"{when(rescue.latest_time)}), past the limit of {rescue.limit_mmol_l:g} mmol/L",
        f"  back to {rescue.target_sodium_mmol_l:.1f} mmol/L from {rescue.from_sodium_mmol_l:.1f} "
        f"(TBW {rescue.tbw_l:.1f} L): {items}",
        f"  {rescue.caution}",
    ]


def plan_json_extras(plan: Plan) -> dict[str, Any]:
    """The plan's two projections, which one is judged, the apparent TBW and the rescue."""
    rescue = plan.rescue
    return {
        "judged_on": plan.judged_on,
        "apparent_tbw_l": None if plan.apparent is None else plan.apparent.combined_l,
        "projection_by_tbw": {
            variant.basis: {
                "tbw_l": variant.tbw_l,
                "projected_sodium_before_mmol_l": variant.projection.sodium_now,
                "projected_sodium_after_mmol_l": variant.check.projected_sodium_mmol_l,
                "projected_sodium_range_mmol_l": variant.check.projected_sodium_range_mmol_l,
                "status": variant.status,
            }
            for variant in plan.variants
        },
        "overcorrection_rescue": None
        if rescue is None
        else {
            "measured_rise_mmol_l": rescue.measured_rise_mmol_l,
            "limit_mmol_l": rescue.limit_mmol_l,
            "from_sodium_mmol_l": rescue.from_sodium_mmol_l,
            "target_sodium_mmol_l": rescue.target_sodium_mmol_l,
            "tbw_l": rescue.tbw_l,
            "volumes": [v.model_dump() for v in rescue.volumes],
            "caution": rescue.caution,
        },
    }
