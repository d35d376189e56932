"""Sodium projected through the doses given since a lab, and what the next dose would do.

The projection starts at a measured sodium and applies the mass-balance
projection (`formulas.projected_sodium`, Chen S et al. Kidney360 2021) dose by
dose, each from the sodium the one before left.  Total body water stays the
patient's (the infused water is not added to it): that is exactly the engine
run again on the projected sodium, as a clinician re-running a check would,
and it gives a slightly larger, so more cautious, rise than adding the water.

Mannitol carries no sodium and stays extracellular; the formula does not
model it (see `check.MANNITOL_NOTE`), so mannitol doses leave the projected
sodium where it was and are counted in a note.  Urine outputs recorded with
their sodium are taken out by the full balance (Barsoum NR, Levine BS.
Nephrol Dial Transplant 2002), each at the end of its collection (the share
of it passed in the span, when it was collected over a period); outputs
without a sodium cannot be taken out and are counted in a note.  Other losses
are not modelled: measured sodium may run ahead of the projection.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from datetime import datetime

import numpy as np

from osmodose.case.inputs import CheckRequest, Labs, Patient
from osmodose.check.engine import total_body_water
from osmodose.check.run import cases_from_request
from osmodose.course.episode import Episode
from osmodose.course.timeline import DoseColumns, OutputColumns, Timeline, latest_lab_at
from osmodose.formulary.model import Formulary
from osmodose.science import formulas as f

SKIPPED_NOTE = (
    "{n} mannitol dose{s} since the latest lab: not in the sodium projection "
    "(mannitol carries no sodium; the formula does not model its effect)."
)


def patient_of(episode: Episode) -> Patient:
    p = episode.patient
    return Patient(weight_kg=p.weight_kg, age_years=p.age_years, sex=p.sex, height_cm=p.height_cm)


NO_HEIGHT_NOTE = (
    "No height in the episode: total body water by the Adrogue-Madias fractions, "
    "not by the formulary's default Watson formula."
)


def tbw_method(episode: Episode, formulary: Formulary) -> str:
    """The method actually used: the episode's, else the formulary's; Watson needs a height.

    An episode that chose Watson always has a height (checked when it was
    made); a formulary defaulting to Watson falls back to the fractions for a
    patient without one, and says so (`NO_HEIGHT_NOTE`) rather than fail.
    """
    method = episode.patient.tbw_method or formulary.settings.tbw_method
    return "watson" if method == "watson" and episode.patient.height_cm is not None else "fraction"


def tbw_notes(episode: Episode, formulary: Formulary) -> list[str]:
    wanted = episode.patient.tbw_method or formulary.settings.tbw_method
    return [NO_HEIGHT_NOTE] if wanted == "watson" and episode.patient.height_cm is None else []


def episode_tbw_l(episode: Episode, formulary: Formulary) -> float:
    """The patient's total body water, by the engine, with the method `tbw_method` names."""
    use_watson = tbw_method(episode, formulary) == "watson"
    request = CheckRequest(patient=patient_of(episode), labs=Labs(sodium_mmol_l=math.nan))
    cases = cases_from_request(request, -1, use_watson)
    return float(total_body_water(cases, formulary.settings)[0])


UNKNOWN_OUTPUT_NOTE = (
    "{n} urine output{s} without a urine sodium since the latest lab: not in the sodium projection "
    "(the balance needs the urine's sodium)."
)
OUTPUT_NOTE = "The projection takes out {volume:.0f} mL of urine recorded with its sodium since the latest lab."


@dataclass(frozen=True)
class Losses:
    """Urine the balance takes out between two times: one step per output with a known sodium, in time order."""

    t: np.ndarray
    volume_l: np.ndarray
    cations_mmol_l: np.ndarray
    unknown: int
    """Outputs in the span without a sodium, left out."""

    @property
    def volume_ml(self) -> float:
        return float(np.sum(self.volume_l)) * f.ML_PER_L


NO_LOSSES = Losses(np.zeros(0), np.zeros(0), np.zeros(0), 0)


def losses_between(outputs: OutputColumns, t_from: float, t_to: float) -> Losses:
    """The urine passed in (t_from, t_to]: each output's share of it, taken out at its end (or at `t_to`)."""
    share = outputs.share_in(t_from, t_to)
    inside = share > 0
    known = inside & outputs.known
    order = np.argsort(outputs.t[known], kind="stable")
    return Losses(
        t=np.minimum(outputs.t[known], t_to)[order],
        volume_l=(outputs.volume_ml[known] * share[known] / f.ML_PER_L)[order],
        cations_mmol_l=outputs.cations_mmol_l[known][order],
        unknown=int(np.count_nonzero(inside & ~outputs.known)),
    )


def project_through(
    start_sodium: float, doses: DoseColumns, rows: np.ndarray, tbw_l: float, losses: Losses = NO_LOSSES
) -> np.ndarray:
    """Projected sodium after each dose in `rows`, one after the other from `start_sodium`."""
    return project_steps(start_sodium, doses, rows, tbw_l, losses)[0]


def project_steps(
    start_sodium: float, doses: DoseColumns, rows: np.ndarray, tbw_l: float, losses: Losses = NO_LOSSES
) -> tuple[np.ndarray, float, list[tuple[float, float]]]:
    """(sodium after each dose in `rows`, sodium after the last step, (time, sodium) after each step).

    Doses (at their start) and urine losses (at their end) in time order, each
    step from the sodium the one before left.  Doses that project no sodium
    (mannitol) leave it unchanged.  Sequential by nature, so a short loop.
    A dose's point is drawn at the end of its infusion.
    """
    events = sorted(
        [(float(doses.t[row]), 0, k) for k, row in enumerate(rows)]
        + [(float(t), 1, j) for j, t in enumerate(losses.t.tolist())]
    )
    after = np.empty(len(rows), dtype=float)
    points: list[tuple[float, float]] = []
    sodium = float(start_sodium)
    for _, kind, k in events:
        if kind == 0:
            row = rows[k]
            if doses.agent.projects_sodium[row]:
                volume_l = float(doses.volume_ml[row]) / f.ML_PER_L
                sodium = float(f.projected_sodium(sodium, float(doses.agent.cations_mmol_l[row]), tbw_l, volume_l))
            after[k] = sodium
            points.append((float(doses.t_end[row]), sodium))
        else:
            out_l, out_c = float(losses.volume_l[k]), float(losses.cations_mmol_l[k])
            sodium = float(f.projected_sodium(sodium, 0.0, tbw_l, 0.0, out_l, out_c))
            points.append((float(losses.t[k]), sodium))
    return after, sodium, points


@dataclass(frozen=True)
class Projection:
    """Sodium now, from the latest lab at or before `at` through the doses started since."""

    at: datetime
    lab_index: int
    lab_sodium: float
    dose_rows: np.ndarray
    after_each: np.ndarray
    sodium_now: float
    notes: list[str] = field(default_factory=list)
    losses: Losses = NO_LOSSES
    """The urine taken out since the lab."""

    @property
    def moved(self) -> bool:
        """Whether anything since the lab (a dose, or urine taken out) moves the projection off the lab."""
        return bool(len(self.dose_rows) or len(self.losses.t))


def doses_since(doses: DoseColumns, t_from: float, t_to: float) -> np.ndarray:
    """Rows of doses started in [t_from, t_to]."""
    return np.flatnonzero((doses.t >= t_from) & (doses.t <= t_to))


def project_now(episode: Episode, timeline: Timeline, tbw_l: float, at: datetime) -> Projection | None:
    """The projection at `at`; None when no lab was drawn by then."""
    labs, doses = timeline.labs, timeline.doses
    index = latest_lab_at(labs, at.timestamp())
    if index < 0:
        return None
    rows = doses_since(doses, float(labs.t[index]), at.timestamp())
    losses = losses_between(timeline.outputs, float(labs.t[index]), at.timestamp())
    after, sodium_now, _ = project_steps(float(labs.sodium[index]), doses, rows, tbw_l, losses)
    skipped = int(np.count_nonzero(~doses.agent.projects_sodium[rows]))
    notes = [SKIPPED_NOTE.format(n=skipped, s="s" if skipped > 1 else "")] if skipped else []
    if len(losses.t):
        notes.append(OUTPUT_NOTE.format(volume=losses.volume_ml))
    if losses.unknown:
        notes.append(UNKNOWN_OUTPUT_NOTE.format(n=losses.unknown, s="s" if losses.unknown > 1 else ""))
    return Projection(
        at=at,
        lab_index=index,
        lab_sodium=float(labs.sodium[index]),
        dose_rows=rows,
        after_each=after,
        sodium_now=sodium_now,
        notes=notes,
        losses=losses,
    )


@dataclass(frozen=True)
class ProjectedPath:
    """Projected sodium drawn from each lab through the doses up to the next lab (NaN breaks segments).

    A point per lab (the measured start) and per dose (at the end of its
    infusion), so the plot shows where measured sodium left the projection.
    """

    t: np.ndarray
    sodium: np.ndarray
    dose_sodium: np.ndarray  # per dose row: projected sodium after it (NaN before the first lab)


def projected_path(timeline: Timeline, tbw_l: float) -> ProjectedPath:
    labs, doses = timeline.labs, timeline.doses
    t_points: list[float] = []
    na_points: list[float] = []
    dose_sodium = np.full(len(doses.t), np.nan)
    last = max([float(np.max(x)) for x in (doses.t_end, timeline.outputs.t) if len(x)], default=-np.inf)
    # doses are in time order: the ones from each lab up to the next are a slice (no scan of every dose per lab)
    starts = np.searchsorted(doses.t, labs.t, side="left")
    ends = np.append(starts[1:], len(doses.t))
    for i in range(len(labs.t)):
        t_next = labs.t[i + 1] if i + 1 < len(labs.t) else np.inf
        rows = np.arange(starts[i], max(starts[i], ends[i]))
        losses = losses_between(timeline.outputs, float(labs.t[i]), float(min(t_next, max(last, labs.t[i]))))
        after, _, points = project_steps(float(labs.sodium[i]), doses, rows, tbw_l, losses)
        dose_sodium[rows] = after
        t_points += [float(labs.t[i]), *(t for t, _ in points), math.nan]
        na_points += [float(labs.sodium[i]), *(na for _, na in points), math.nan]
    return ProjectedPath(t=np.asarray(t_points, dtype=float), sodium=np.asarray(na_points), dose_sodium=dose_sodium)
