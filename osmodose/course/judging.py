"""What a course finding is: a check's `Finding` with the time of the entry it is about.

Every course rule judges through the helpers a check uses (`osmodose.check.judging`:
`threshold`, `severity_of`, the rise limits, the high-risk test, measured-else-calculated
osmolality), so a figure within rounding of a limit is at the limit in a course
review exactly as in `osmodose check`.  A rule that judges one figure against its
limits makes its finding through `past_limit`, which words it only once it fires.
"""

from __future__ import annotations

from collections.abc import Callable
from datetime import datetime

from osmodose.check.judging import Severity, limit_crossed, severity_of
from osmodose.check.results import Finding

#: A finding's words from (severity, limit crossed).
Words = Callable[[Severity, float], str]


class CourseFinding(Finding):
    """A finding with the time of the entry it is about."""

    time: datetime | None = None


def when(moment: datetime) -> str:
    """A time as shown everywhere: ISO 8601 to the minute, with its offset."""
    return moment.isoformat(timespec="minutes")


def crossing_count(n: int, total: int, what: str) -> str:
    """ " (3 of 7 labs crossing a limit)": how many of a finding's entries crossed it (nothing for one entry)."""
    return f" ({n} of {total} {what} crossing a limit)" if total > 1 else ""


def past_limit(
    code: str,
    value: float,
    limits: tuple[float | None, float | None],
    unit: str,
    time: datetime,
    words: Words,
    below: bool = False,
) -> list[CourseFinding]:
    """`value` against its (warn, refuse) `limits` (`severity_of`): its finding when it crosses one, else none.

    The finding carries the limit it crossed; `words(severity, limit)` says it
    (a limit the unit does not set never fires).
    """
    warn, refuse = limits
    severity = severity_of(value, warn, refuse, below=below)
    if severity is None:
        return []
    limit = limit_crossed(severity, warn, refuse)
    assert limit is not None, "a limit that is not set never fires"
    message = words(severity, limit)
    return [
        CourseFinding(code=code, severity=severity, message=message, value=value, limit=limit, unit=unit, time=time)
    ]


__all__ = ["CourseFinding", "Words", "crossing_count", "past_limit", "when"]
