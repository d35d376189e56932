"""One panel of the course plot, drawn by textual-plotext from a `PlotPanel`.

The widget only draws what `plot_view` decided; `series` and `panel` keep
what it was given, so a test can check it received exactly
`series.course_series` of the episode on disk.
"""

from __future__ import annotations

from textual.markup import escape
from textual.widgets import Static
from textual_plotext import PlotextPlot

from osmodose.app.plot_view import GREY, PlotPanel, x_label
from osmodose.course.series import CourseSeries

_MARKER = {"points": "●", "line": "braille", "points+line": "●"}


class CoursePlot(PlotextPlot):
    """A plotext plot that redraws itself from a panel description."""

    def __init__(self, plot_id: str, x_label: bool = True) -> None:
        super().__init__(id=plot_id, classes="course-plot")
        self.x_label = x_label
        self.series: CourseSeries | None = None
        self.panel: PlotPanel | None = None

    def show(self, series: CourseSeries, panel: PlotPanel) -> None:
        self.series, self.panel = series, panel
        plt = self.plt
        plt.clear_data()
        plt.clear_figure()
        plt.xlabel(x_label(series) if self.x_label else "")
        for hours in panel.dose_hours:
            plt.vline(hours, _rgb(GREY))
        for line in panel.lines:
            if not line.hours:
                continue
            draw = plt.scatter if line.style == "points" else plt.plot
            draw(list(line.hours), list(line.values), marker=_MARKER[line.style], color=_rgb(line.colour))
        self.refresh()


class PlotLegend(Static):
    """The panel's name and legend as one line of coloured text (plotext's own legend would cover the points)."""

    def __init__(self, legend_id: str) -> None:
        super().__init__("", id=legend_id, classes="plot-legend")
        self.legend: tuple[tuple[str, str], ...] = ()

    def show(self, panel: PlotPanel) -> None:
        self.legend = panel.legend
        legend = "  ".join(f"[{colour}]{escape(text)}[/]" for colour, text in panel.legend)
        self.update(f"[b]{escape(panel.title)}[/b]  {legend}")


def _rgb(colour: str) -> tuple[int, int, int]:
    """#rrggbb to the (r, g, b) plotext takes."""
    return (int(colour[1:3], 16), int(colour[3:5], 16), int(colour[5:7], 16))
