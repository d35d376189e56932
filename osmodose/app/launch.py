"""Start the app: load the formulary, then (and only then) import textual."""

from __future__ import annotations

import sys

from osmodose.cli.exit_codes import BAD_INPUT, OK
from osmodose.errors import OsmodoseError
from osmodose.formulary import demo_formulary_path, load_formulary


def launch(formulary_path: str | None) -> int:
    """Open the app on the unit's formulary (or the bundled demo when none is named).

    An unusable formulary prints the command line's one-line message and
    returns 2 before any screen appears: never a silent fall-back to the demo.
    """
    try:
        formulary = load_formulary(formulary_path or demo_formulary_path())
    except OsmodoseError as error:
        sys.stderr.write(f"osmodose: {error}\n")
        return BAD_INPUT
    from osmodose.app.app import OsmodoseApp  # noqa: PLC0415 (textual only once the formulary is good)

    OsmodoseApp(formulary).run()
    return OK
