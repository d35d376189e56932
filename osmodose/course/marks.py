"""Which timeline cells are past a limit, marked in words ("324.0 TOO HIGH"), never by colour alone.

Each figure the course judges is marked against the same limits, through the
same helpers, as its finding (`check.judging.threshold`, the rule table's
named limits): a sodium or osmolality above the ceilings, an osmolar gap
above its limits after mannitol, a 24 h rise where the rise limits apply, a
24 h fall, mannitol within 24 h, ICP above the treatment threshold, CPP below
its target.  A calculated osmolality is marked only where none was measured
(the measured one is what is judged then).  The plain-data rows
(`TimelineRow`) carry each cell's mark and severity, so the app colours what
the text already says.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from osmodose.check.judging import NONE, REFUSE, SEVERITY_NAMES, threshold, threshold_below
from osmodose.check.rules import RULES_BY_CODE, rise_limits_in_force
from osmodose.course.timeline import Timeline
from osmodose.formulary.model import Limits

#: The word beside a value past a limit: past the warn limit, past the refuse limit.
MARK_WORDS: dict[tuple[str, int], str] = {
    ("above", 1): "HIGH",
    ("above", 2): "TOO HIGH",
    ("below", 1): "LOW",
    ("below", 2): "TOO LOW",
}
LEGEND = "HIGH/LOW: past a warn limit; TOO HIGH/TOO LOW: past a refuse limit (the formulary's limits)"


@dataclass(frozen=True)
class Cell:
    """One figure of a timeline row: its name, its value as text, and its mark ("" when within limits)."""

    name: str
    value: str
    mark: str = ""
    severity: str | None = None
    """"warn" or "refuse" when marked, else None."""

    @property
    def text(self) -> str:
        return " ".join(x for x in (self.name, self.value, self.mark) if x)


@dataclass(frozen=True)
class TimelineRow:
    """One entry of the timeline: its time, its kind (lab, dose, reading) and its cells."""

    time: str
    kind: str
    cells: tuple[Cell, ...]
    entry_id: str = ""
    """The entry's stable id (`L1`, `D2`): what `course amend` and `course remove` name it by."""
    corrections: str = ""
    """How the entry was amended, with the values it replaced ("" when never corrected)."""

    @property
    def text(self) -> str:
        """The details as the table prints them: cells two spaces apart, marks in words, then any amendment."""
        details = "  ".join(cell.text for cell in self.cells)
        return f"{details}  AMENDED {self.corrections}" if self.corrections else details

    @property
    def severity(self) -> str | None:
        """The worst mark of the row, for a screen that flags whole rows."""
        found = {cell.severity for cell in self.cells}
        return "refuse" if "refuse" in found else ("warn" if "warn" in found else None)


def mark(severity: int, side: str = "above") -> tuple[str, str | None]:
    """(word, severity name) for one judged figure; ("", None) within limits."""
    if severity == NONE:
        return "", None
    return MARK_WORDS[(side, min(int(severity), REFUSE))], SEVERITY_NAMES[min(int(severity), REFUSE)]


@dataclass(frozen=True)
class Marks:
    """Per entry and figure: 0 within limits, 1 past the warn, 2 past the refuse limit."""

    sodium: np.ndarray
    osmolality: np.ndarray
    calculated: np.ndarray
    gap: np.ndarray
    rise: np.ndarray
    fall: np.ndarray
    mannitol_24h: np.ndarray
    icp: np.ndarray
    cpp: np.ndarray


def timeline_marks(timeline: Timeline, limits: Limits) -> Marks:
    """Every mark of a timeline, judged as the course findings judge the same figures."""
    labs, doses, readings = timeline.labs, timeline.doses, timeline.readings
    osm_warn, osm_refuse = RULES_BY_CODE["osmolality-high"].named_limits(limits)
    gap_warn, gap_refuse = RULES_BY_CODE["osmolar-gap-high"].named_limits(limits)
    fall_warn, fall_refuse = RULES_BY_CODE["sodium-fall-24h"].named_limits(limits)
    back = labs.sodium_lookback
    applies, rise_warn, rise_refuse = rise_limits_in_force(limits, back.lowest_sodium, back.high_risk)
    mannitol = doses.t[doses.agent.is_mannitol]
    after_mannitol = labs.t > np.min(mannitol) if len(mannitol) else np.zeros(len(labs.t), dtype=bool)
    no_measured = np.isnan(labs.measured_osmolality)
    return Marks(
        sodium=threshold(labs.sodium, *RULES_BY_CODE["sodium-high"].named_limits(limits)),
        osmolality=threshold(labs.measured_osmolality, osm_warn, osm_refuse),
        calculated=np.where(no_measured, threshold(labs.calculated_osmolality, osm_warn, osm_refuse), NONE),
        gap=np.where(after_mannitol, threshold(labs.gap, gap_warn, gap_refuse), NONE),
        rise=np.where(applies, threshold(labs.sodium_window.rise, rise_warn, rise_refuse), NONE),
        fall=threshold(labs.sodium_window.fall, fall_warn, fall_refuse),
        mannitol_24h=np.where(
            doses.agent.is_mannitol, threshold(doses.mannitol_24h_g_per_kg, limits.mannitol_24h_max, None), NONE
        ),
        icp=threshold(readings.icp, limits.icp_treat_above, None),
        cpp=threshold_below(readings.cpp, limits.cpp_target_min, None),
    )
