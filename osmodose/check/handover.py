"""The handover summary: what the app's save (Ctrl+S) writes and what a printout shows.

A summary leaves the screen and may be read hours later by someone else, so
it heads the report with what a page on its own needs: whose it is (the
patient label), when it was made (with the UTC offset), which formulary
(name, version, SHA-256, and DEMO while the invented demo unit is in use),
which osmodose, and the caution.  The body is the report the command line
prints, word for word.  One function makes it for every front end.
"""

from __future__ import annotations

from datetime import datetime

from osmodose.check.report import formulary_lines, render_text
from osmodose.check.results import CAUTION, CheckResult, FormularyRef

TITLE = "osmodose handover summary"
NO_LABEL = "none: write the patient's name and number on this page"
RULE = "-" * 72


def clean_label(label: str | None) -> str:
    """The label on one line: control characters and runs of spaces become one space."""
    if not label:
        return ""
    return " ".join("".join(ch if ch.isprintable() else " " for ch in label).split())


def handover_text(
    report: str,
    formulary: FormularyRef,
    program_version: str,
    label: str | None = None,
    at: datetime | None = None,
    title: str = TITLE,
) -> str:
    """`report` headed by the patient label, the time, the formulary, the program version and the caution.

    `at` must carry a time zone (default: now, in local time).
    """
    stamp = at if at is not None else datetime.now().astimezone()
    if stamp.tzinfo is None or stamp.utcoffset() is None:
        raise ValueError("handover_text needs a time zone on `at`")
    lines = [
        title,
        f"patient label: {clean_label(label) or NO_LABEL}",
        f"made at: {stamp.isoformat(timespec='minutes')}",
        f"program: osmodose {program_version}",
        *formulary_lines(formulary),
        CAUTION,
        RULE,
        "",
    ]
    return "\n".join(lines) + "\n" + report


def check_handover(result: CheckResult, label: str | None = None, at: datetime | None = None) -> str:
    """The handover summary of one check: its report under the handover heading."""
    return handover_text(render_text(result), result.formulary, result.program_version, label, at)
