"""Where each value of a case came from when labs were read from a file: the file, or typed over it.

`osmodose.datain` builds a `DataIn` when a check, a verification or a course
entry reads a labs file (`--labs FILE`); the request carries it, the check
judges the sodium's age from it, and the result shows it (JSON `labs_file`,
the report, the app), so nobody has to guess whether a figure rests on a
typed value or on which Observation, drawn when.
"""

from __future__ import annotations

from typing import Literal

from pydantic import AwareDatetime

from osmodose.frozen import Frozen

Source = Literal["file", "typed"]


class FieldOrigin(Frozen):
    """One value of the case: from the file (which resource, drawn when, how old) or typed over it."""

    field: str
    """The field table's key: "sodium", "bun", "weight", "age", "sex"."""
    source: Source
    """"file" or "typed" (typed on the command line or in the app: typed values win)."""
    shown: str
    """The value as written: the file's value and UCUM code ("141 mmol/L"), or the typed text."""
    resource: str | None = None
    """The FHIR resource it was read from ("Observation/na-2", "Patient/p1")."""
    loinc: str | None = None
    """The LOINC code it was matched by."""
    effective_time: AwareDatetime | None = None
    """When the sample was drawn (the Observation's effective time); a date alone is taken at 00:00 UTC."""
    date_only: bool = False
    """True when the file gives a date without a time of day."""
    age_h: float | None = None
    """Hours from the effective time to the time of the check (`DataIn.at`)."""
    replaced: str | None = None
    """For a typed value: the file's value it replaced, and from where."""


class DataIn(Frozen):
    """The labs file a case was read from, the time ages are counted to, each value's origin, what was ignored."""

    path: str
    """The file as named."""
    sha256: str
    """SHA-256 of the file's bytes."""
    at: AwareDatetime
    """The time of the check: each value's age is counted to it."""
    fields: tuple[FieldOrigin, ...] = ()
    """Each value of the case that the file gave or could have given, in the field table's order."""
    ignored: tuple[str, ...] = ()
    """One line per resource or value not used, and why."""

    def origin(self, key: str) -> FieldOrigin | None:
        for origin in self.fields:
            if origin.field == key:
                return origin
        return None

    def age_h(self, key: str) -> float | None:
        """Age in hours of the file's value of `key`; None when typed or not from the file."""
        origin = self.origin(key)
        return None if origin is None or origin.source != "file" else origin.age_h
