"""The course plot's two panels as plain drawing instructions: no textual or plotext here.

`series.course_series` gives the data (the same the PNG/SVG plot draws); this
only decides what each panel draws and in which colour, and writes the
legend, so the widget is a loop over `PlotPanel.lines`.  A limit the
formulary leaves unset is not drawn.  Limit lines are drawn as lines across
the episode's hours (not as axis rules) so the y axis always takes them in.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

from osmodose.course.findings import when
from osmodose.course.series import CourseSeries, Floats

Style = Literal["points", "line", "points+line", "limit"]
#: matplotlib's tab: colours, as `osmodose course plot` draws the same lines.
BLUE, ORANGE, RED, PURPLE, GREEN, GREY = "#1f77b4", "#ff7f0e", "#d62728", "#9467bd", "#2ca02c", "#7f7f7f"


@dataclass(frozen=True)
class PlotLine:
    label: str
    hours: Floats
    values: Floats
    style: Style
    colour: str
    """#rrggbb, the same colour as the PNG/SVG plot uses for it (matplotlib's tab: colours)."""


@dataclass(frozen=True)
class PlotPanel:
    """One panel: its lines, the hours of dose starts (vertical ticks) and the legend under it."""

    title: str
    ylabel: str
    lines: tuple[PlotLine, ...]
    """In drawing order: limit lines first, so a measured point in the same text row is drawn over them."""
    dose_hours: Floats = ()
    x_range: Floats = ()
    """First and last hour of the episode: both panels share it, so their times line up."""
    legend: tuple[tuple[str, str], ...] = ()
    """(colour, text) pairs, in the order drawn."""

    @property
    def empty(self) -> bool:
        return not any(line.hours for line in self.lines)


def _span(series: CourseSeries) -> Floats:
    """First and last hour with anything in it, for the limit lines."""
    hours = (*series.lab_hours, *series.dose_hours, *series.reading_hours)
    return (min(hours), max(hours)) if hours else ()


def _limit(label: str, value: float | None, span: Floats, colour: str) -> list[PlotLine]:
    if value is None or not span:
        return []
    return [PlotLine(f"{label} {value:g}", span, (value,) * len(span), "limit", colour)]


def x_label(series: CourseSeries) -> str:
    return f"hours since {when(series.origin)}" if series.origin is not None else "hours"


def sodium_panel(series: CourseSeries) -> PlotPanel:
    """Measured sodium (points), the projection from each lab through the doses (lines), and the ceilings."""
    span = _span(series)
    lines = [PlotLine("projected", hours, na, "line", BLUE) for hours, na in series.projected if hours]
    lines.append(PlotLine("measured", series.lab_hours, series.sodium, "points", BLUE))
    limits = [*_limit("warn", series.sodium_warn, span, ORANGE), *_limit("refuse", series.sodium_refuse, span, RED)]
    legend = [(BLUE, "● measured"), (BLUE, "⠤ projected")]
    if series.dose_hours:
        legend.append((GREY, "│ dose"))
    legend += [(line.colour, f"─ {line.label}") for line in limits]
    return PlotPanel("sodium mmol/L", "mmol/L", (*limits, *lines), series.dose_hours, span, tuple(legend))


def pressure_panel(series: CourseSeries) -> PlotPanel:
    """ICP and CPP (MAP - ICP) at each reading, with the ICP treatment threshold and the CPP target."""
    span = _span(series)
    lines = [
        PlotLine("ICP", series.reading_hours, series.icp, "points+line", PURPLE),
        PlotLine("CPP", series.reading_hours, series.cpp, "points+line", GREEN),
    ]
    limits = [
        *_limit("ICP threshold", series.icp_treat_above, span, PURPLE),
        *_limit("CPP target", series.cpp_target_min, span, GREEN),
    ]
    legend = [(PURPLE, "● ICP"), (GREEN, "● CPP"), *((line.colour, f"─ {line.label}") for line in limits)]
    return PlotPanel("pressure mmHg", "mmHg", (*limits, *lines), (), span, tuple(legend))
