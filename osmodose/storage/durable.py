"""Durability helpers shared by every file osmodose writes for keeps (episodes, the verification log)."""

from __future__ import annotations

import os
from pathlib import Path


def fsync_directory(directory: Path) -> None:
    """Make a new or renamed file's directory entry durable too.

    A file fsynced but not its directory entry can vanish after a power cut.
    Where a directory cannot be opened (some systems) only durability is lost,
    never the write itself, so errors are ignored here on purpose.
    """
    try:
        fd = os.open(directory, os.O_RDONLY)
    except OSError:
        return
    try:
        os.fsync(fd)
    except OSError:
        pass
    finally:
        os.close(fd)
