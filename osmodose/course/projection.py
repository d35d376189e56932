"""Sodium projected through the doses given since a lab, and what the next dose would do.

The projection starts at a measured sodium and applies the mass-balance
projection (`formulas.projected_sodium`, Chen S et al. Kidney360 2021) dose by
dose, each from the sodium the one before left.  Total body water stays the
patient's (the infused water is not added to it): that is exactly the engine
run again on the projected sodium, as a clinician re-running a check would,
and it gives a slightly larger, so more cautious, rise than adding the water.

Mannitol carries no sodium and stays extracellular; the formula does not
model it (see `check.MANNITOL_NOTE`), so mannitol doses leave the projected
sodium where it was and are counted in a note.  Ongoing losses are not
modelled either: measured sodium may run ahead of the projection.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from datetime import datetime

import numpy as np

from osmodose.case.inputs import CheckRequest, Labs, Patient
from osmodose.check.engine import total_body_water
from osmodose.check.run import cases_from_request
from osmodose.course.episode import Episode, LabEntry
from osmodose.course.timeline import DoseColumns, Timeline, latest_lab_at
from osmodose.formulary.model import Formulary
from osmodose.science import formulas as f
from osmodose.science.units import Q_

SKIPPED_NOTE = (
    "{n} mannitol dose{s} since the latest lab: not in the sodium projection "
    "(mannitol carries no sodium; the formula does not model its effect)."
)


def patient_of(episode: Episode) -> Patient:
    p = episode.patient
    return Patient(weight_kg=p.weight_kg, age_years=p.age_years, sex=p.sex, height_cm=p.height_cm)


def labs_of(lab: LabEntry, sodium: float | None = None) -> Labs:
    """A lab entry as the engine's Labs; `sodium` replaces the measured one (a projection)."""
    return Labs(
        sodium_mmol_l=lab.sodium_mmol_l if sodium is None else sodium,
        potassium_mmol_l=lab.potassium_mmol_l,
        glucose_mmol_l=lab.glucose_mmol_l,
        urea_mmol_l=lab.urea_mmol_l,
        osmolality_mosm_kg=lab.osmolality_mosm_kg,
    )


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


def project_through(start_sodium: float, doses: DoseColumns, rows: np.ndarray, tbw_l: float) -> np.ndarray:
    """Projected sodium after each dose in `rows`, one after the other from `start_sodium`.

    Doses that project no sodium (mannitol) leave it unchanged.  Sequential by
    nature (each step starts where the last ended), so a short loop over doses.
    """
    out = np.empty(len(rows), dtype=float)
    sodium = float(start_sodium)
    for k, row in enumerate(rows):
        if doses.agent.projects_sodium[row]:
            sodium = float(
                f.projected_sodium(
                    Q_(sodium, "mmol/L"),
                    Q_(float(doses.agent.cations_mmol_l[row]), "mmol/L"),
                    Q_(tbw_l, "L"),
                    Q_(float(doses.volume_ml[row]), "mL"),
                ).m_as("mmol/L")
            )
        out[k] = sodium
    return out


@dataclass(frozen=True)
class Projection:
    """Sodium now, from the latest lab at or before `at` through the doses started since."""

    at: datetime
    lab_index: int
    lab_sodium: float
    dose_rows: np.ndarray
    after_each: np.ndarray
    sodium_now: float
    skipped_mannitol: int
    notes: list[str] = field(default_factory=list)


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
    after = project_through(float(labs.sodium[index]), doses, rows, tbw_l)
    skipped = int(np.count_nonzero(~doses.agent.projects_sodium[rows]))
    notes = [SKIPPED_NOTE.format(n=skipped, s="s" if skipped > 1 else "")] if skipped else []
    return Projection(
        at=at,
        lab_index=index,
        lab_sodium=float(labs.sodium[index]),
        dose_rows=rows,
        after_each=after,
        sodium_now=float(after[-1]) if len(after) else float(labs.sodium[index]),
        skipped_mannitol=skipped,
        notes=notes,
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
    # doses are in time order: the ones from each lab up to the next are a slice (no scan of every dose per lab)
    starts = np.searchsorted(doses.t, labs.t, side="left")
    ends = np.append(starts[1:], len(doses.t))
    for i in range(len(labs.t)):
        rows = np.arange(starts[i], max(starts[i], ends[i]))
        after = project_through(float(labs.sodium[i]), doses, rows, tbw_l)
        dose_sodium[rows] = after
        t_points += [float(labs.t[i]), *doses.t_end[rows].tolist(), math.nan]
        na_points += [float(labs.sodium[i]), *after.tolist(), math.nan]
    return ProjectedPath(t=np.asarray(t_points, dtype=float), sodium=np.asarray(na_points), dose_sodium=dose_sodium)
