"""Start the app: load the formulary (and the episode, if named), then (and only then) import textual."""

from __future__ import annotations

import sys

from osmodose.app.course_view import open_course
from osmodose.cli.exit_codes import BAD_INPUT, OK
from osmodose.errors import OsmodoseError
from osmodose.formulary import demo_formulary_path, load_formulary


def launch(formulary_path: str | None, episode_path: str | None = None) -> int:
    """Open the app on the unit's formulary (or the bundled demo when none is named), and the episode if given.

    An unusable formulary or episode file prints the command line's one-line
    message and returns 2 before any screen appears: never a silent fall-back
    to the demo, never an app open on a file it cannot show.
    """
    try:
        formulary = load_formulary(formulary_path or demo_formulary_path())
        course = open_course(episode_path, formulary) if episode_path is not None else None
    except OsmodoseError as error:
        sys.stderr.write(f"osmodose: {error}\n")
        return BAD_INPUT
    from osmodose.app.app import OsmodoseApp  # noqa: PLC0415 (textual only once the files are good)

    OsmodoseApp(formulary, course=course).run()
    return OK
