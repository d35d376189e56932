"""Reading a user's file with limits: a regular file, of a sane size, or a one-line refusal.

A formulary, an episode or the verification log is named by a user, so it
may be anything: a FIFO that never delivers (`mkfifo`), a device that never
ends (`/dev/urandom`), a folder, or a file far larger than the format ever
needs.  `open_regular` checks what the path is before a single byte is read
(a FIFO is opened without waiting for a writer), and `read_bounded` reads at
most `limit` bytes, so no input can hang osmodose or exhaust its memory.
The caller turns `FileRefused` into its own typed error naming the file.
"""

from __future__ import annotations

import os
import stat
from pathlib import Path
from typing import BinaryIO

_NONBLOCK = getattr(os, "O_NONBLOCK", 0)
_BINARY = getattr(os, "O_BINARY", 0)

#: Size limits, documented in docs/file-limits.md.
FORMULARY_MAX_BYTES = 1_000_000
EPISODE_MAX_BYTES = 50_000_000


class FileRefused(Exception):
    """The file cannot be read as asked; `problem` is the words after its name."""

    def __init__(self, problem: str) -> None:
        super().__init__(problem)
        self.problem = problem


def _kind(mode: int) -> str:
    if stat.S_ISDIR(mode):
        return "a folder"
    if stat.S_ISFIFO(mode):
        return "a pipe (FIFO)"
    if stat.S_ISCHR(mode) or stat.S_ISBLK(mode):
        return "a device"
    if stat.S_ISSOCK(mode):
        return "a socket"
    return "not a regular file"


def describe_size(limit: int) -> str:
    """1000000 -> '1 MB', 50000000 -> '50 MB' (decimal units, as file managers show them)."""
    if limit >= 1_000_000 and limit % 1_000_000 == 0:
        return f"{limit // 1_000_000} MB"
    if limit >= 1000 and limit % 1000 == 0:
        return f"{limit // 1000} kB"
    return f"{limit} bytes"


def open_regular(path: Path | str, limit: int | None = None) -> BinaryIO:
    """Open `path` for reading only if it is a regular file (no larger than `limit` bytes, when given).

    Raises FileNotFoundError / PermissionError / OSError as `open` would, and
    FileRefused for anything that is not a regular file or is too large.
    """
    path = Path(path)
    info = os.stat(path)  # follows a link: what matters is what is read
    if not stat.S_ISREG(info.st_mode):
        raise FileRefused(f"is {_kind(info.st_mode)}, not a file osmodose can read")
    fd = os.open(path, os.O_RDONLY | _NONBLOCK | _BINARY)
    try:
        info = os.fstat(fd)  # the file actually opened (it may have been swapped since the stat)
        if not stat.S_ISREG(info.st_mode):
            raise FileRefused(f"is {_kind(info.st_mode)}, not a file osmodose can read")
        if limit is not None and info.st_size > limit:
            raise FileRefused(
                f"is {info.st_size:,} bytes, over the {describe_size(limit)} limit for this kind of file "
                "(see docs/file-limits.md)"
            )
        if _NONBLOCK:
            os.set_blocking(fd, True)
        return os.fdopen(fd, "rb")
    except BaseException:
        os.close(fd)
        raise


def read_bounded(path: Path | str, limit: int) -> bytes:
    """The whole of a regular file of at most `limit` bytes (one byte more read: a file that grew is refused)."""
    with open_regular(path, limit) as handle:
        data = handle.read(limit + 1)
    if len(data) > limit:
        raise FileRefused(f"is over the {describe_size(limit)} limit for this kind of file (see docs/file-limits.md)")
    return data


def os_reason(error: OSError) -> str:
    """The system's words for an OSError ('No such file or directory'), or its class name."""
    return error.strerror or type(error).__name__
