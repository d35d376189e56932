"""What a course finding is: a check's `Finding` with the time of the entry it is about.

Every course rule judges through the helpers a check uses (`osmodose.check.judging`:
`threshold`, `severity_of`, the rise limits, the high-risk test, measured-else-calculated
osmolality), so a figure within rounding of a limit is at the limit in a course
review exactly as in `osmodose check`.
"""

from __future__ import annotations

from datetime import datetime

from osmodose.check.results import Finding


class CourseFinding(Finding):
    """A finding with the time of the entry it is about."""

    time: datetime | None = None


def when(moment: datetime) -> str:
    """A time as shown everywhere: ISO 8601 to the minute, with its offset."""
    return moment.isoformat(timespec="minutes")


__all__ = ["CourseFinding", "when"]
