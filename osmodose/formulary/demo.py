"""The bundled demo formulary (an invented unit), and how a loaded file is known to be it.

A formulary is the demo when its bytes are the bundled demo file's (the same
SHA-256), wherever it was read from: a copy of the demo is still invented
data.  Every report, JSON document and screen made with it says DEMO
(`Formulary.demo`, `formulary.demo` in JSON), so a printout from a trial run
is never taken for a unit's real figures.
"""

from __future__ import annotations

import functools
import hashlib
from pathlib import Path

DEMO_FILE_NAME = "demo-unit.toml"
#: What a report says beside the formulary while the demo is in use.
DEMO_NOTE = "DEMO formulary: an invented unit for trying osmodose; not for patient care"


def demo_formulary_path() -> Path:
    """The bundled demo formulary: inside the installed package, else the source tree's."""
    packaged = Path(__file__).resolve().parent.parent / "formularies" / DEMO_FILE_NAME
    if packaged.is_file():
        return packaged
    return Path(__file__).resolve().parent.parent.parent / "formularies" / DEMO_FILE_NAME


@functools.cache
def demo_sha256() -> str | None:
    """The SHA-256 of the bundled demo file's bytes (None if it cannot be read)."""
    try:
        return hashlib.sha256(demo_formulary_path().read_bytes()).hexdigest()
    except OSError:
        return None


def is_demo(sha256: str) -> bool:
    """Whether a file with this SHA-256 is the bundled demo formulary."""
    return sha256 == demo_sha256()
