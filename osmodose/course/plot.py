"""The course plot as a PNG or SVG file, for a handover note.

Top panel: measured sodium (points), the projection from each lab through the
doses given (dashed), dose starts (ticks) and the sodium ceilings; bottom
panel: ICP and CPP with the ICP treatment threshold and the CPP target.
matplotlib is imported here only, inside `write_plot`, with the file-only Agg
backend, so no other command pays for it and no display is needed.
"""

from __future__ import annotations

from datetime import timedelta
from pathlib import Path

from osmodose.check.results import CAUTION
from osmodose.course.series import CourseSeries
from osmodose.errors import InputError

FORMATS = {".png": "png", ".svg": "svg"}


def plot_format(path: Path | str) -> str:
    """ "png" or "svg" from the file name; anything else is an InputError."""
    suffix = Path(path).suffix.lower()
    if suffix not in FORMATS:
        raise InputError("out", str(path), "is not a file name osmodose can plot to", "a name ending in .png or .svg")
    return FORMATS[suffix]


def write_plot(series: CourseSeries, path: Path | str, title: str = "") -> None:
    """Draw `series` into `path` (PNG or SVG by extension)."""
    fmt = plot_format(path)
    if series.empty or series.origin is None:
        raise InputError("plot", None, "needs at least one lab or reading in the episode")
    import matplotlib

    matplotlib.use("Agg", force=True)
    from matplotlib import dates as mdates
    from matplotlib import pyplot as plt

    origin = series.origin
    tz = origin.tzinfo

    def at(hours: tuple[float, ...]) -> list[object]:
        return [origin + timedelta(hours=h) for h in hours]

    with matplotlib.rc_context({"svg.hashsalt": "osmodose", "svg.fonttype": "none"}):
        figure, (top, bottom) = plt.subplots(2, 1, sharex=True, figsize=(9, 6), height_ratios=(3, 2))
        try:
            for k, (hours, sodium) in enumerate(series.projected):
                top.plot(at(hours), sodium, "--", color="tab:blue", alpha=0.6, label="projected" if k == 0 else None)
            top.plot(at(series.lab_hours), series.sodium, "o", color="tab:blue", label="measured")
            for value, colour, name in (
                (series.sodium_warn, "tab:orange", "warn"),
                (series.sodium_refuse, "tab:red", "refuse"),
            ):
                if value is not None:
                    top.axhline(value, color=colour, linewidth=1, label=f"{name} {value:g}")
            for when in at(series.dose_hours):
                top.axvline(when, color="grey", linewidth=0.6, alpha=0.5)
            top.set_ylabel("sodium (mmol/L)")
            top.legend(loc="best", fontsize="small")
            top.set_title(title or "course of therapy")
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
                bottom.axhline(
                    threshold, color="tab:purple", linestyle=":", linewidth=1, label=f"ICP threshold {threshold:g}"
                )
            if series.cpp_target_min is not None:
                target = series.cpp_target_min
                bottom.axhline(target, color="tab:green", linestyle=":", linewidth=1, label=f"CPP target {target:g}")
            bottom.set_ylabel("pressure (mmHg)")
            bottom.legend(loc="best", fontsize="small")
            bottom.xaxis.set_major_formatter(mdates.DateFormatter("%d %b %H:%M", tz=tz))
            bottom.set_xlabel(f"time (UTC offset {origin.strftime('%z')})")
            figure.autofmt_xdate()
            figure.text(0.01, 0.005, CAUTION, fontsize=6, color="grey")
            metadata = {"Date": None} if fmt == "svg" else {"Software": None}
            try:
                figure.savefig(path, format=fmt, metadata=metadata)
            except OSError as error:
                raise InputError("out", str(path), f"cannot be written: {error.strerror or error}") from None
        finally:
            plt.close(figure)
