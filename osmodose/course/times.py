"""Plausible entry times, and one UTC offset per display.

A lab dated 2062 for 2026 became "the latest sodium" while the findings still
called the 2026 lab the latest; a lab dated 0001 was accepted.  An entry's
time (and an episode's start) is therefore an input error, naming the field,
when it is:

* more than 10 minutes in the future (clocks differ by a few minutes; a
  result is never in the future);
* before the episode's start, when the episode has one (`course new --start`);
* older than a span (default 30 days; `--max-age` for a back-dated entry).

Times are stored with the offset they were written in, but shown in one
offset per display, the episode's (that of its start, else of its first
entry), so two entries an hour apart never read as the same time, or in the
wrong order, because one was typed in UTC and the other in local time.
"""

from __future__ import annotations

from datetime import datetime, timedelta, tzinfo

from osmodose.course.episode import Episode, EpisodePatient
from osmodose.errors import InputError
from osmodose.science.units import parse_quantity

FUTURE_ALLOWED = timedelta(minutes=10)
DEFAULT_MAX_AGE = timedelta(days=30)
MAX_AGE_ACCEPTED = "a span of 1 to 3650 days, e.g. 45 (days) or 8 weeks"


def now() -> datetime:
    """The clock every course check reads (local time, with its offset); tests set it."""
    return datetime.now().astimezone()


def shown(moment: datetime) -> str:
    """A time as an error message shows it: to the minute, with its offset."""
    return moment.isoformat(timespec="minutes")


def parse_max_age(raw: object) -> timedelta:
    """--max-age: a bare number of days, or a span with its unit (8 weeks, 1000 h)."""
    if raw is None or (isinstance(raw, str) and not raw.strip()):
        return DEFAULT_MAX_AGE
    days = float(parse_quantity("max-age", raw, "day").m_as("day"))
    if not 1 <= days <= 3650:
        raise InputError("max-age", raw, "is not a span osmodose accepts", MAX_AGE_ACCEPTED)
    return timedelta(days=days)


def check_time(
    moment: datetime,
    field: str = "time",
    started: datetime | None = None,
    max_age: timedelta = DEFAULT_MAX_AGE,
    at: datetime | None = None,
) -> datetime:
    """`moment` if it is plausible for an entry now; else an InputError naming `field` and the accepted range."""
    current = at if at is not None else now()
    latest = current + FUTURE_ALLOWED
    earliest = current - max_age
    if started is not None and started > earliest:
        earliest = started
    accepted = f"from {shown(earliest)} to {shown(latest)}"
    if moment > latest:
        raise InputError(field, shown(moment), "is more than 10 minutes in the future", accepted)
    if started is not None and moment < started:
        raise InputError(field, shown(moment), f"is before the episode's start ({shown(started)})", accepted)
    if moment < current - max_age:
        days = max_age / timedelta(days=1)
        raise InputError(
            field, shown(moment), f"is more than {days:g} days ago (--max-age allows older entries)", accepted
        )
    return moment


def check_entry_time(
    episode: Episode, moment: datetime, field: str = "time", max_age: timedelta = DEFAULT_MAX_AGE
) -> datetime:
    """An entry's time checked against the clock and the episode's start."""
    return check_time(moment, field, episode.started, max_age)


def new_episode(patient: EpisodePatient, started: datetime | None, max_age: timedelta = DEFAULT_MAX_AGE) -> Episode:
    """An empty episode, its start (if given) checked like an entry's time."""
    if started is not None:
        check_time(started, "start", None, max_age)
    return Episode(patient=patient, started=started)


def display_offset(episode: Episode) -> tzinfo | None:
    """The offset an episode is shown in: that of its start, else of its earliest entry; None when it has neither."""
    if episode.started is not None:
        return episode.started.tzinfo
    first = min((e.time for e in (*episode.labs, *episode.doses, *episode.readings)), default=None)
    return first.tzinfo if first is not None else None


def in_display_offset(episode: Episode) -> Episode:
    """The same episode with every time (entries, removed entries, corrections, start) in its display offset."""
    offset = display_offset(episode)
    if offset is None:
        return episode
    entries = [*episode.entries(), *(r.entry for r in episode.removed)]
    wanted = offset.utcoffset(None)
    if all(e.time.utcoffset() == wanted and all(c.at.utcoffset() == wanted for c in e.corrections) for e in entries):
        return episode  # the usual case: every time already in the episode's offset
    data = episode.model_dump()

    def move(value: object) -> object:
        if isinstance(value, datetime):
            try:
                return value.astimezone(offset)
            except OverflowError:  # a hand-typed year 9999 at the edge of the calendar: shown as written
                return value
        if isinstance(value, dict):
            return {key: move(item) for key, item in value.items()}
        if isinstance(value, (list, tuple)):
            return [move(item) for item in value]
        return value

    return Episode.model_validate(move(data))
