"""An episode as columns: one numpy array per quantity, one row per entry.

Findings, the projection, the table and the plot all read these columns, so
the figure shown beside a lab is the one the findings judged.  Times are POSIX
seconds (UTC), so entries written with different offsets compare correctly.

"Within 24 h" is inclusive: two labs exactly 24 h apart are in one window
(the safer reading for an overcorrection limit).  Windows slide over the
sorted times (`windows`): memory stays linear in the number of entries.  A dose that starts at the
same minute as a lab is taken as given after the sample was drawn.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from datetime import datetime

import numpy as np

from osmodose.case.fields import LAB_FIELDS
from osmodose.check.engine import AgentColumns, Cases, compute
from osmodose.check.judging import high_risk, judged_osmolality
from osmodose.course.episode import EntryBase, Episode
from osmodose.course.windows import largest_rise_across, sliding_extreme, window_any, window_bounds, window_sums
from osmodose.formulary.model import Formulary
from osmodose.science import formulas as f

WINDOW_H = 24.0
#: How far back a rise looks for the low sodium that makes the 24 h rise limits apply, and for
#: the risk factors of osmotic demyelination: two days up to the window's end, so a correction
#: begun yesterday from a low sodium is still judged today once sodium is back in range.
LOOKBACK_H = 48.0
SECONDS_PER_HOUR = 3600.0


def _column(values: list[float | None]) -> np.ndarray:
    return np.asarray([np.nan if v is None else v for v in values], dtype=float)


@dataclass(frozen=True)
class WindowChange:
    """For each sample: its change against the lowest and highest sample of the preceding window.

    `rise[j]` = x[j] - min(x[i] : t[j] - window <= t[i] <= t[j]); `low_index[j]` is that i.
    `fall[j]` = max(...) - x[j]; `high_index[j]` its i.  Both are NaN (cannot be computed, not
    0) when no earlier sample falls in the window; the index is then j itself.
    """

    rise: np.ndarray
    low_index: np.ndarray
    fall: np.ndarray
    high_index: np.ndarray


def window_change(t: np.ndarray, x: np.ndarray, hours: float = WINDOW_H) -> WindowChange:
    """Rise and fall into each sample over any window of `hours` ending at it (sliding windows: linear memory)."""
    if not len(x):
        empty = np.zeros(0, dtype=int)
        return WindowChange(rise=x, low_index=empty, fall=x, high_index=empty)
    lo, hi = window_bounds(t, t - hours * SECONDS_PER_HOUR, t)
    earlier = (hi - lo) > 1  # another sample in the window (one at the same time counts)
    low_index = sliding_extreme(x, lo, hi)
    high_index = sliding_extreme(x, lo, hi, largest=True)
    return WindowChange(
        rise=np.where(earlier, x - x[low_index], np.nan),
        low_index=low_index,
        fall=np.where(earlier, x[high_index] - x, np.nan),
        high_index=high_index,
    )


@dataclass(frozen=True)
class Lookback:
    """Per window: the lowest measured sodium in it, and whether the risk of osmotic demyelination is high."""

    lowest_sodium: np.ndarray  # inf where the window holds no lab
    high_risk: np.ndarray


def lookback(
    t: np.ndarray, sodium: np.ndarray, potassium: np.ndarray, t_from: np.ndarray, t_to: np.ndarray
) -> Lookback:
    """The labs drawn in each window [t_from, t_to] (inclusive), over windows of sorted times (linear memory)."""
    lo, hi = window_bounds(t, t_from, t_to)
    risky = high_risk(sodium, potassium)
    lowest = sliding_extreme(sodium, lo, hi)
    return Lookback(
        lowest_sodium=np.where(lowest >= 0, sodium[np.maximum(lowest, 0)] if len(sodium) else np.inf, np.inf),
        high_risk=window_any(risky, lo, hi),
    )


@dataclass(frozen=True)
class EntryColumns:
    """Entries of one kind as columns, a row each in time order, with their times (what every kind has).

    `times` keep the offsets they were written with, to show them; `t` (POSIX seconds) compares them.
    """

    times: tuple[datetime, ...]
    t: np.ndarray


def _times(entries: Sequence[EntryBase]) -> tuple[tuple[datetime, ...], np.ndarray]:
    """The `times` and `t` of `EntryColumns`."""
    times = tuple(entry.time for entry in entries)
    return times, np.asarray([moment.timestamp() for moment in times], dtype=float)


@dataclass(frozen=True)
class LabColumns(EntryColumns):
    sodium: np.ndarray
    potassium: np.ndarray
    glucose: np.ndarray
    urea: np.ndarray
    ethanol: np.ndarray
    measured_osmolality: np.ndarray
    calculated_osmolality: np.ndarray
    osmolality: np.ndarray  # measured, else calculated: what the ceilings judge (as in a check)
    gap: np.ndarray
    sodium_window: WindowChange
    sodium_lookback: Lookback  # the 48 h up to each lab: does a rise into it fall under the rise limits?


@dataclass(frozen=True)
class DoseColumns(EntryColumns):
    agent_ids: tuple[str, ...]
    t_end: np.ndarray
    volume_ml: np.ndarray
    duration_min: np.ndarray
    agent: AgentColumns
    mannitol_g: np.ndarray  # 0 for other agents
    mannitol_24h_g_per_kg: np.ndarray  # mannitol started within the 24 h ending at each dose's start


@dataclass(frozen=True)
class ReadingColumns(EntryColumns):
    map: np.ndarray
    icp: np.ndarray
    cpp: np.ndarray


@dataclass(frozen=True)
class OutputColumns(EntryColumns):
    """Urine outputs: collected evenly over [t_start, t] (t_start = t when no period is given)."""

    t_start: np.ndarray
    volume_ml: np.ndarray
    #: Na + K of each output, mmol/L (potassium 0 when not measured); NaN without a urine sodium.
    cations_mmol_l: np.ndarray

    @property
    def known(self) -> np.ndarray:
        """Outputs whose sodium was measured: the ones the balance can take out."""
        return ~np.isnan(self.cations_mmol_l)

    def share_in(self, t_from: float, t_to: float) -> np.ndarray:
        """The share of each output passed in (t_from, t_to]: by overlap over a period, else by its time."""
        span = self.t - self.t_start
        overlap = np.clip(np.minimum(self.t, t_to) - np.maximum(self.t_start, t_from), 0.0, None)
        with np.errstate(invalid="ignore", divide="ignore"):
            spread = np.where(span > 0, overlap / np.where(span > 0, span, 1.0), 0.0)
        at_once = (span <= 0) & (self.t > t_from) & (self.t <= t_to)
        return np.where(span > 0, spread, at_once.astype(float))


@dataclass(frozen=True)
class Timeline:
    weight_kg: float
    labs: LabColumns
    doses: DoseColumns
    readings: ReadingColumns
    outputs: OutputColumns


def lab_columns(episode: Episode, formulary: Formulary) -> LabColumns:
    """The labs as columns, their osmolality figures worked by the engine exactly as a check works them."""
    labs = episode.labs
    n = len(labs)
    times, t = _times(labs)
    columns = {field.key: _column([lab.value(field.key) for lab in labs]) for field in LAB_FIELDS}
    p = episode.patient
    cases = Cases(
        weight_kg=np.full(n, p.weight_kg),
        age_years=np.full(n, p.age_years),
        male=np.full(n, p.sex == "male"),
        height_cm=np.full(n, np.nan if p.height_cm is None else p.height_cm),
        labs=columns,
        agent_index=np.full(n, -1),
        dose_unit=np.full(n, ""),
        dose_amount=np.full(n, np.nan),
        dose_per_kg=np.zeros(n, dtype=bool),
        duration_min=np.full(n, np.nan),
        use_watson=np.zeros(n, dtype=bool),
    )
    figures = compute(cases, formulary.agents, formulary.settings)
    sodium, potassium, measured = columns["sodium"], columns["potassium"], columns["osmolality"]
    return LabColumns(
        times=times,
        t=t,
        sodium=sodium,
        potassium=potassium,
        glucose=columns["glucose"],
        urea=columns["urea"],
        ethanol=columns["ethanol"],
        measured_osmolality=measured,
        calculated_osmolality=figures.calculated_osmolality,
        osmolality=judged_osmolality(measured, figures.calculated_osmolality),
        gap=figures.osmolar_gap,
        sodium_window=window_change(t, sodium),
        sodium_lookback=lookback(t, sodium, potassium, t - LOOKBACK_H * SECONDS_PER_HOUR, t),
    )


def dose_columns(episode: Episode, formulary: Formulary, weight_kg: float) -> DoseColumns:
    """Dose columns with each agent's composition; an agent missing from the formulary is an InputError."""
    doses = episode.doses
    index = np.asarray(
        [formulary.agents.index(formulary.agent(d.agent_id, f"doses[{i + 1}].agent_id")) for i, d in enumerate(doses)],
        dtype=int,
    )
    agent = AgentColumns.gather(formulary.agents, index)
    times, t = _times(doses)
    duration = _column([d.duration_min for d in doses])
    volume = _column([d.volume_ml for d in doses])
    grams = np.asarray(f.amount_in_volume(volume, agent.solute_g_per_l), dtype=float)
    mannitol_g = np.where(agent.is_mannitol, np.nan_to_num(grams, nan=0.0), 0.0)
    lo, hi = window_bounds(t, t - WINDOW_H * SECONDS_PER_HOUR, t)
    cumulative = window_sums(mannitol_g, lo, hi) / weight_kg
    return DoseColumns(
        times=times,
        t=t,
        agent_ids=tuple(d.agent_id for d in doses),
        t_end=t + np.nan_to_num(duration, nan=0.0) * 60.0,
        volume_ml=volume,
        duration_min=duration,
        agent=agent,
        mannitol_g=mannitol_g,
        mannitol_24h_g_per_kg=cumulative,
    )


def reading_columns(episode: Episode) -> ReadingColumns:
    readings = episode.readings
    times, t = _times(readings)
    map_ = _column([r.map_mmhg for r in readings])
    icp = _column([r.icp_mmhg for r in readings])
    return ReadingColumns(
        times=times,
        t=t,
        map=map_,
        icp=icp,
        cpp=np.asarray(f.cerebral_perfusion_pressure(map_, icp), dtype=float),
    )


def output_columns(episode: Episode) -> OutputColumns:
    outputs = episode.outputs
    times, t = _times(outputs)
    over = _column([o.over_min for o in outputs])
    sodium = _column([o.sodium_mmol_l for o in outputs])
    potassium = _column([o.potassium_mmol_l for o in outputs])
    return OutputColumns(
        times=times,
        t=t,
        t_start=t - np.nan_to_num(over, nan=0.0) * 60.0,
        volume_ml=_column([o.volume_ml for o in outputs]),
        cations_mmol_l=sodium + np.nan_to_num(potassium, nan=0.0),
    )


def build_timeline(episode: Episode, formulary: Formulary) -> Timeline:
    weight = episode.patient.weight_kg
    return Timeline(
        weight_kg=weight,
        labs=lab_columns(episode, formulary),
        doses=dose_columns(episode, formulary, weight),
        readings=reading_columns(episode),
        outputs=output_columns(episode),
    )


def latest_lab_at(labs: LabColumns, t: float) -> int:
    """Index of the latest lab drawn at or before `t`, or -1."""
    return int(np.searchsorted(labs.t, t, side="right")) - 1


def gap_rise_across_mannitol(t: np.ndarray, gap: np.ndarray, doses: DoseColumns) -> tuple[float, int, int]:
    """(rise, j, i): the largest gap[j] - gap[i] with a mannitol dose started in [t[i], t[j]); -inf when none."""
    return largest_rise_across(t, gap, doses.t[doses.agent.is_mannitol])


def mannitol_between(doses: DoseColumns, t_from: np.ndarray, t_to: np.ndarray) -> np.ndarray:
    """Whether a mannitol dose started in [t_from, t_to) (a dose at a lab's minute follows that lab)."""
    starts = np.sort(doses.t[doses.agent.is_mannitol])
    before = np.searchsorted(starts, t_to, side="left") - np.searchsorted(starts, t_from, side="left")
    return before > 0


def latest_time(timeline: Timeline) -> float | None:
    """POSIX time of the latest entry of any kind (what a review judges "now"), or None."""
    times = [float(np.max(t)) for t in (timeline.labs.t, timeline.doses.t, timeline.readings.t) if len(t)]
    return max(times) if times else None


def latest_measured_osmolality(labs: LabColumns, t: float, max_age_h: float | None = None) -> int | None:
    """Index of the latest lab at or before `t` with a measured osmolality, drawn at most `max_age_h` before `t`.

    A measured osmolality stays the one to judge until it is too old, even when
    a newer lab has none (only a calculated one): None when there is none that
    recent (`max_age_h` None: no age limit).
    """
    measured = np.flatnonzero(np.isfinite(labs.measured_osmolality) & (labs.t <= t))
    if not len(measured):
        return None
    j = int(measured[-1])
    if max_age_h is not None and (t - float(labs.t[j])) / SECONDS_PER_HOUR > max_age_h:
        return None
    return j
