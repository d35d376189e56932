"""Times a user types (`--time`, `--at`, the forms): ISO 8601 or `now`, never ambiguous once read.

A time written without a UTC offset is taken as the computer's local time on
that date (daylight saving included) and kept with that offset.
"""

from __future__ import annotations

from datetime import datetime

from osmodose.errors import InputError

TIME_ACCEPTED = "ISO 8601 such as 2026-12-01T08:30+00:00 (no offset = this computer's local time), or now"


def parse_time(raw: object, field: str = "time", now: datetime | None = None) -> datetime:
    """An aware datetime from typed text; naive text is local time, stored with its offset."""
    if isinstance(raw, datetime):
        moment = raw
    else:
        text = str(raw).strip() if raw is not None else ""
        if not text:
            raise InputError(field, None, "is required", TIME_ACCEPTED)
        if text.lower() == "now":
            return (now or datetime.now()).astimezone()
        try:
            moment = datetime.fromisoformat(text)
        except ValueError:
            raise InputError(field, raw, "is not a time osmodose can read", TIME_ACCEPTED) from None
    return moment if moment.tzinfo is not None else moment.astimezone()
