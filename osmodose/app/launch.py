"""Start the app: its first frame at once, the formulary (and the episode) read behind it.

An unusable formulary or episode file ends the app before any figure is shown
and prints the command line's one-line message (exit status 2): never a
silent fall-back to the demo, never a dosing screen on a file it cannot show.
Light on purpose: the command line imports this module, and textual only
once the app is asked for.
"""

from __future__ import annotations

import gc
import sys
from typing import TYPE_CHECKING

from osmodose.cli.exit_codes import BAD_INPUT, OK

if TYPE_CHECKING:
    from osmodose.app.loading import Loaded


def launch(formulary_path: str | None, episode_path: str | None = None) -> int:
    """Open the app on the unit's formulary (or the bundled demo when none is named), and the episode if given.

    The cycle collector is paused from here until the files are read and the
    engine imported (the first frame and the figures): what is made meanwhile
    (textual, pint, numpy, pydantic and our models) lives as long as the app,
    so its passes would only slow the start.  Then it is frozen out of the
    collector's view, and collection runs as usual.
    """
    gc.disable()
    from osmodose.app.app import OsmodoseApp  # noqa: PLC0415 (textual only once the app is asked for)
    from osmodose.app.loading import load_files, loading_words  # noqa: PLC0415

    def load() -> Loaded:
        try:
            return load_files(formulary_path, episode_path)
        finally:
            gc.freeze()
            gc.enable()

    app = OsmodoseApp(
        load=load,
        loading=loading_words(formulary_path),
        demo=formulary_path is None,
    )
    app.run()
    if app.load_error is not None:
        sys.stderr.write(f"osmodose: {app.load_error}\n")
        return BAD_INPUT
    return OK
