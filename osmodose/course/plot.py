"""The course plot as a PNG or SVG file, for a handover note.

Top panel: measured sodium (points), the projection from each lab through the
doses given (dashed), dose starts (ticks) and the sodium ceilings; bottom
panel: ICP and CPP with the ICP treatment threshold and the CPP target.
matplotlib is imported here only, inside `draw`, with the file-only Agg
backend, so no other command pays for it and no display is needed.

Times are shown in the episode's offset, with the year on the axis when the
course crosses a year or is not of this year.  Doses are one artist however
many there are.  An episode whose entries span more than a year, or lie
outside 1900-2999, is not drawn (one line naming its first and last times:
a year typed wrong, which `course amend` corrects) rather than crash the
date axis.  The file is written with `storage.atomic_write`: never over an
existing file without --force, never through a symbolic link.
"""

from __future__ import annotations

import io
from datetime import datetime, timedelta
from pathlib import Path
from typing import Any

from osmodose.check.results import CAUTION
from osmodose.course import times
from osmodose.course.series import CourseSeries
from osmodose.errors import InputError
from osmodose.storage.atomic import DestinationIsALink, atomic_write

FORMATS = {".png": "png", ".svg": "svg"}
MAX_SPAN = timedelta(days=366)
YEARS = (1900, 2999)


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

    def at(hours: tuple[float, ...]) -> list[object]:
        return [origin + timedelta(hours=h) for h in hours]

    figure, (top, bottom) = plt.subplots(2, 1, sharex=True, figsize=(9, 6), height_ratios=(3, 2))
    for k, (hours, sodium) in enumerate(series.projected):
        top.plot(at(hours), sodium, "--", color="tab:blue", alpha=0.6, label="projected" if k == 0 else None)
    top.plot(at(series.lab_hours), series.sodium, "o", color="tab:blue", label="measured")
    for value, colour, name in (
        (series.sodium_warn, "tab:orange", "warn"),
        (series.sodium_refuse, "tab:red", "refuse"),
    ):
        if value is not None:
            top.axhline(value, color=colour, linewidth=1, label=f"{name} {value:g}")
    if series.dose_hours:  # one artist for every dose, however many
        top.vlines(
            at(series.dose_hours), 0, 1, transform=top.get_xaxis_transform(), color="grey", linewidth=0.6, alpha=0.5
        )
    top.set_ylabel("sodium (mmol/L)")
    top.legend(loc="best", fontsize="small")
    top.set_title(title or "course of therapy")
    if series.reading_hours:
        bottom.plot(at(series.reading_hours), series.icp, "o-", color="tab:purple", label="ICP")
        bottom.plot(at(series.reading_hours), series.cpp, "s-", color="tab:green", label="CPP")
    if series.icp_treat_above is not None:
        threshold = series.icp_treat_above
        bottom.axhline(threshold, color="tab:purple", linestyle=":", linewidth=1, label=f"ICP threshold {threshold:g}")
    if series.cpp_target_min is not None:
        target = series.cpp_target_min
        bottom.axhline(target, color="tab:green", linestyle=":", linewidth=1, label=f"CPP target {target:g}")
    bottom.set_ylabel("pressure (mmHg)")
    bottom.legend(loc="best", fontsize="small")
    with_year = start.year != end.year or start.year != times.now().astimezone(tz).year
    bottom.xaxis.set_major_formatter(mdates.DateFormatter("%d %b %Y %H:%M" if with_year else "%d %b %H:%M", tz=tz))
    bottom.set_xlabel(f"time (UTC offset {origin.strftime('%z')})")
    figure.autofmt_xdate()
    figure.text(0.01, 0.005, CAUTION, fontsize=6, color="grey")
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
