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

#: Lines (limits too) in braille dots, which place a value a quarter row apart; a measured value as a dot.
#: A solid rule would snap a limit to the nearest whole text row and so misplace it.
POINT, LINE = "●", "braille"


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
        if len(panel.x_range) == 2 and panel.x_range[1] > panel.x_range[0]:
            plt.xlim(*panel.x_range)
        for line in panel.lines:
            xs, ys, colour = list(line.hours), list(line.values), _rgb(line.colour)
            if not xs:
                continue
            if line.style != "points":
                plt.plot(xs, ys, marker=LINE, color=colour)
            if line.style in ("points", "points+line"):
                plt.scatter(xs, ys, marker=POINT, color=colour)
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
