"""The course plot as a PNG or SVG file, for a handover note.

Top panel: measured sodium (points), the projection from each lab through the
doses given (dashed), each dose start as a line labelled with its agent and
volume, and the sodium ceilings.  When mannitol was given, a middle panel:
measured and calculated osmolality with their ceilings, and the osmolar gap
with its limits (mannitol's safety rests on them).  Bottom panel: ICP and CPP
with the ICP treatment threshold and the CPP target, and each dose's ICP
response.  The caution (and DEMO, while the demo formulary is in use) is
printed at a size that reads on paper.  matplotlib is imported here only,
inside `draw`, with the file-only Agg backend, so no other command pays for it
and no display is needed.

Times are shown in the episode's offset, with the year on the axis when the
course crosses a year or is not of this year.  Dose lines are one artist
however many there are (their labels only while they can be read).  An episode
whose entries span more than a year, or lie outside 1900-2999, is not drawn
(one line naming its first and last times: a year typed wrong, which `course
amend` corrects) rather than crash the date axis.  The file is written with
`storage.atomic_write`: never over an existing file without --force, never
through a symbolic link.
"""

from __future__ import annotations

import io
import math
from datetime import datetime, timedelta
from pathlib import Path
from typing import Any

from osmodose.check.results import CAUTION
from osmodose.course import times
from osmodose.course.series import CourseSeries
from osmodose.errors import InputError
from osmodose.formulary.demo import DEMO_NOTE
from osmodose.storage.atomic import DestinationIsALink, atomic_write

FORMATS = {".png": "png", ".svg": "svg"}
MAX_SPAN = timedelta(days=366)
YEARS = (1900, 2999)
#: Font sizes in points: the caution and the dose labels must read on a printed page.
CAUTION_POINTS = 9
LABEL_POINTS = 8
#: Beyond this many doses their labels would overprint each other: the lines stay, the labels go.
MOST_LABELS = 40


def plot_format(path: Path | str) -> str:
    """ "png" or "svg" from the file name; anything else is an InputError."""
    suffix = Path(path).suffix.lower()
    if suffix not in FORMATS:
        raise InputError("out", str(path), "is not a file name osmodose can plot to", "a name ending in .png or .svg")
    return FORMATS[suffix]


def _span(series: CourseSeries) -> tuple[datetime, datetime]:
    """First and last time drawn; InputError when they cannot make a readable date axis."""
    assert series.origin is not None
    hours = [*series.lab_hours, *series.dose_hours, *series.reading_hours]
    first, last = min(hours), max(hours)
    try:
        start, end = series.origin + timedelta(hours=first), series.origin + timedelta(hours=last)
    except OverflowError:
        start = end = datetime.max.replace(tzinfo=series.origin.tzinfo)
    if end - start > MAX_SPAN or not (YEARS[0] <= start.year and end.year <= YEARS[1]):
        raise InputError(
            "plot",
            None,
            f"needs entries within one year, dated {YEARS[0]} to {YEARS[1]}: these run from "
            f"{start.isoformat(timespec='minutes')} to {end.isoformat(timespec='minutes')}; a time is probably "
            "mistyped (course show lists the entries, course amend corrects one)",
        )
    return start, end


def caution_text(series: CourseSeries) -> str:
    """The line under the plot: DEMO first while the demo formulary is in use, then the caution."""
    return (DEMO_NOTE + ". " if series.demo else "") + CAUTION


def draw(series: CourseSeries, title: str = "") -> Any:
    """The matplotlib figure of `series` (the caller closes it)."""
    if series.empty or series.origin is None:
        raise InputError("plot", None, "needs at least one lab or reading in the episode")
    start, end = _span(series)
    import matplotlib

    matplotlib.use("Agg", force=True)
    from matplotlib import dates as mdates
    from matplotlib import pyplot as plt

    origin = series.origin
    tz = origin.tzinfo

    def at(hours: tuple[float, ...]) -> list[datetime]:
        return [origin + timedelta(hours=h) for h in hours]

    osmolality = series.mannitol_given and any(
        math.isfinite(x) for x in (*series.measured_osmolality, *series.calculated_osmolality)
    )
    panels = 3 if osmolality else 2
    ratios = (3, 2, 2) if osmolality else (3, 2)
    figure, axes = plt.subplots(panels, 1, sharex=True, figsize=(9, 8.5 if osmolality else 6.5), height_ratios=ratios)
    top, bottom = axes[0], axes[-1]
    _sodium_panel(top, series, at, title)
    if osmolality:
        _osmolality_panel(axes[1], series, at)
    _pressure_panel(bottom, series, at)
    with_year = start.year != end.year or start.year != times.now().astimezone(tz).year
    bottom.xaxis.set_major_formatter(mdates.DateFormatter("%d %b %Y %H:%M" if with_year else "%d %b %H:%M", tz=tz))
    bottom.set_xlabel(f"time (UTC offset {origin.strftime('%z')})")
    figure.autofmt_xdate()
    figure.subplots_adjust(top=0.95, bottom=0.16 if osmolality else 0.2)
    figure.text(0.01, 0.01, caution_text(series), fontsize=CAUTION_POINTS, color="black", wrap=True)
    return figure


def render_plot(series: CourseSeries, fmt: str, title: str = "") -> bytes:
    """The plot's file content as PNG or SVG bytes."""
    import matplotlib

    with matplotlib.rc_context({"svg.hashsalt": "osmodose", "svg.fonttype": "none"}):
        figure = draw(series, title)
        try:
            buffer = io.BytesIO()
            metadata = {"Date": None} if fmt == "svg" else {"Software": None}
            figure.savefig(buffer, format=fmt, metadata=metadata)
            return buffer.getvalue()
        finally:
            from matplotlib import pyplot as plt

            plt.close(figure)


def write_plot(series: CourseSeries, path: Path | str, title: str = "", overwrite: bool = False) -> None:
    """Draw `series` into `path` (PNG or SVG by extension); an existing file only with `overwrite`."""
    fmt = plot_format(path)
    data = render_plot(series, fmt, title)
    try:
        atomic_write(path, data, overwrite=overwrite)
    except FileExistsError:
        raise InputError("out", str(path), "already exists: choose another file or add --force to replace it") from None
    except DestinationIsALink:
        raise InputError(
            "out", str(path), "is a symbolic link: osmodose never writes through or over one (give the file itself)"
        ) from None
    except OSError as error:
        raise InputError("out", str(path), f"cannot be written: {error.strerror or error}") from None


def _doses(axis: Any, series: CourseSeries, at: Any, labelled: bool) -> None:
    """A line at each dose start (one artist, however many doses); on the sodium panel each is labelled with its
    agent and volume while there are few enough to read (`MOST_LABELS`)."""
    if not series.dose_hours:
        return
    starts = at(series.dose_hours)
    axis.vlines(starts, 0, 1, transform=axis.get_xaxis_transform(), color="grey", linewidth=0.8, alpha=0.6)
    if not labelled or len(starts) > MOST_LABELS:
        return
    for when, label in zip(starts, series.dose_labels, strict=True):
        axis.annotate(
            label,
            xy=(when, 1.0),
            xycoords=("data", "axes fraction"),
            xytext=(2, -3),
            textcoords="offset points",
            rotation=90,
            va="top",
            ha="left",
            fontsize=LABEL_POINTS,
            color="dimgrey",
        )


def _limit_lines(axis: Any, warn: float | None, refuse: float | None, what: str) -> None:
    """The warn (orange) and refuse (red) limits a panel's figure is judged by, each labelled with its value."""
    for value, colour, name in ((warn, "tab:orange", "warn"), (refuse, "tab:red", "refuse")):
        if value is not None:
            axis.axhline(value, color=colour, linewidth=1, label=f"{what}{name} {value:g}")


def _sodium_panel(top: Any, series: CourseSeries, at: Any, title: str) -> None:
    for k, (hours, sodium) in enumerate(series.projected):
        top.plot(at(hours), sodium, "--", color="tab:blue", alpha=0.6, label="projected" if k == 0 else None)
    top.plot(at(series.lab_hours), series.sodium, "o", color="tab:blue", label="measured")
    _limit_lines(top, series.sodium_warn, series.sodium_refuse, "")
    _doses(top, series, at, labelled=True)
    top.set_ylabel("sodium (mmol/L)")
    top.legend(loc="lower right", fontsize="small")
    top.set_title(title or "course of therapy")


def _osmolality_panel(axis: Any, series: CourseSeries, at: Any) -> None:
    """Measured and calculated osmolality with the ceilings; the osmolar gap on its own scale at the right."""
    hours = at(series.lab_hours)
    axis.plot(hours, series.measured_osmolality, "o-", color="tab:brown", label="measured osmolality")
    axis.plot(hours, series.calculated_osmolality, "x--", color="tab:grey", label="calculated osmolality")
    _limit_lines(axis, series.osmolality_warn, series.osmolality_refuse, "osmolality ")
    _doses(axis, series, at, labelled=False)
    axis.set_ylabel("osmolality (mOsm/kg)")
    gap = axis.twinx()
    gap.plot(hours, series.osmolar_gap, "s:", color="tab:olive", label="osmolar gap")
    for value, name in ((series.gap_warn, "warn"), (series.gap_refuse, "refuse")):
        if value is not None:
            gap.axhline(value, color="tab:olive", linestyle="-." if name == "refuse" else ":", linewidth=1,
                        label=f"gap {name} {value:g}")  # fmt: skip
    gap.set_ylabel("osmolar gap (mOsm/kg)")
    lines, labels = axis.get_legend_handles_labels()
    more, more_labels = gap.get_legend_handles_labels()
    axis.legend(lines + more, labels + more_labels, loc="best", fontsize="x-small", ncol=2, framealpha=0.8)


def _pressure_panel(bottom: Any, series: CourseSeries, at: Any) -> None:
    if series.reading_hours:
        bottom.plot(at(series.reading_hours), series.icp, "o-", color="tab:purple", label="ICP")
        bottom.plot(at(series.reading_hours), series.cpp, "s-", color="tab:green", label="CPP")
    for k, (h_before, before, h_low, low) in enumerate(series.icp_responses):
        bottom.annotate(
            "",
            xy=(at((h_low,))[0], low),
            xytext=(at((h_before,))[0], before),
            arrowprops={"arrowstyle": "->", "color": "grey", "alpha": 0.7},
        )
        if k == 0:  # one legend entry for the arrows
            bottom.plot([], [], color="grey", alpha=0.7, label="ICP response to a dose")
    if series.icp_treat_above is not None:
        threshold = series.icp_treat_above
        bottom.axhline(threshold, color="tab:purple", linestyle=":", linewidth=1, label=f"ICP threshold {threshold:g}")
    if series.cpp_target_min is not None:
        target = series.cpp_target_min
        bottom.axhline(target, color="tab:green", linestyle=":", linewidth=1, label=f"CPP target {target:g}")
    _doses(bottom, series, at, labelled=False)
    bottom.set_ylabel("pressure (mmHg)")
    bottom.legend(loc="best", fontsize="small")
