"""The one way osmodose writes a whole file: atomically, never over a file it was not told to replace.

Every file osmodose writes for a user (episodes, the app's summary, `audit
--out`, `formulary new --out`, `course plot --out`) goes through
`atomic_writer` (or `atomic_write` for data already in memory):

* the data goes to a temporary file in the destination's folder
  (`.NAME.RANDOM.tmp`, readable by its owner only while it is written), is
  flushed to disk (fsync) and only then takes the destination's name, so a
  crash, a kill or a full disk leaves the old file or the new one, never half;
* without `overwrite`, an existing destination is never replaced: the new
  file is linked into place (`link` fails when the name exists, so two
  writers cannot both win) and `FileExistsError` is raised;
* a symbolic link at the destination is never followed nor replaced
  (`DestinationIsALink`): writing through a link can clobber a file
  elsewhere, and replacing it would silently cut the link;
* the temporary file is removed on every path out (error, interruption),
  and a stale one left by a kill can be found by `stale_temporaries`.
"""

from __future__ import annotations

import contextlib
import errno
import io
import os
import secrets
import stat
from collections.abc import Iterator
from pathlib import Path
from typing import IO, Any

from osmodose.storage.durable import fsync_directory

#: The temporary file of `NAME` is `.NAME.<8 hex>.tmp`, beside it.
TEMP_SUFFIX = ".tmp"
_TEMP_CHARS = frozenset("abcdefghijklmnopqrstuvwxyz0123456789_")
_NOFOLLOW = getattr(os, "O_NOFOLLOW", 0)
_BINARY = getattr(os, "O_BINARY", 0)


class DestinationIsALink(OSError):
    """The destination is a symbolic link: never written through or over."""

    def __init__(self, path: Path) -> None:
        super().__init__(errno.ELOOP, "is a symbolic link (osmodose never writes through or over a link)", str(path))


def temporary_name(path: Path) -> Path:
    return path.with_name(f".{path.name}.{secrets.token_hex(4)}{TEMP_SUFFIX}")


def stale_temporaries(path: Path | str) -> list[Path]:
    """Temporary files of `path` left behind (a writer killed mid-write), oldest name first.

    Only meaningful while the caller holds whatever lock its writers share:
    otherwise a writer still at work would look stale.
    """
    path = Path(path)
    folder = path.parent if str(path.parent) else Path(".")
    prefix = f".{path.name}."
    found = []
    try:
        names = os.listdir(folder)
    except OSError:
        return []
    for name in names:
        middle = name[len(prefix) : -len(TEMP_SUFFIX)] if name.endswith(TEMP_SUFFIX) else ""
        # 8 hex digits (these names), or 8 of [a-z0-9_] (tempfile's, used by earlier versions)
        if name.startswith(prefix) and len(middle) == 8 and all(c in _TEMP_CHARS for c in middle):
            found.append(folder / name)
    return sorted(found)


def _refuse_link(path: Path) -> bool:
    """True when `path` exists (raises for a link); False when the name is free."""
    try:
        info = os.lstat(path)
    except FileNotFoundError:
        return False
    if stat.S_ISLNK(info.st_mode):
        raise DestinationIsALink(path)
    return True


def _open_temporary(path: Path) -> tuple[Path, int, int]:
    """(name, descriptor, the mode a plain new file gets here); the file itself is private until committed.

    Created with 0o666 so the system applies the umask, which gives the mode
    a new file would have (read back with fstat: asking for the umask would
    change it, for every thread), then made private before any byte is written.
    """
    temp = temporary_name(path)
    fd = os.open(temp, os.O_WRONLY | os.O_CREAT | os.O_EXCL | _NOFOLLOW | _BINARY, 0o666)
    try:
        plain = stat.S_IMODE(os.fstat(fd).st_mode)
        if hasattr(os, "fchmod"):
            os.fchmod(fd, 0o600)
    except BaseException:
        os.close(fd)
        temp.unlink(missing_ok=True)
        raise
    return temp, fd, plain


@contextlib.contextmanager
def atomic_writer(
    path: Path | str, overwrite: bool = False, mode: int | None = None, text: bool = False, **text_options: Any
) -> Iterator[IO[Any]]:
    """A file to write `path`'s new content into; it takes the name only when the block ends without error.

    `mode` is the new file's permission bits (default: the old file's when it
    is replaced, else those of a plain new file).  With `text`, the handle is
    a text handle (UTF-8 unless `encoding` is given; `newline` passed on).
    Raises FileExistsError (without `overwrite`), DestinationIsALink, or the
    OSError of the step that failed; the destination is then untouched.
    """
    path = Path(path)
    folder = path.parent if str(path.parent) else Path(".")
    exists = _refuse_link(path)
    if exists and not overwrite:
        raise FileExistsError(errno.EEXIST, "already exists", str(path))
    old_mode = None
    if exists:
        with contextlib.suppress(FileNotFoundError):
            old_mode = stat.S_IMODE(os.stat(path).st_mode)
    temp, fd, plain = _open_temporary(path)
    final_mode = mode if mode is not None else (old_mode if old_mode is not None else plain)
    raw = None
    handle: IO[Any] | None = None
    try:
        raw = os.fdopen(fd, "wb")
        handle = io.TextIOWrapper(raw, encoding=text_options.pop("encoding", "utf-8"), **text_options) if text else raw
        yield handle
        handle.flush()
        if hasattr(os, "fchmod"):
            os.fchmod(fd, final_mode)
        os.fsync(fd)
        handle.close()
        _commit(temp, path, overwrite)
        fsync_directory(folder)
    finally:
        if raw is None:
            os.close(fd)
        elif handle is not None and not handle.closed:
            with contextlib.suppress(OSError, ValueError):
                handle.close()
        if raw is not None and not raw.closed:
            with contextlib.suppress(OSError, ValueError):
                raw.close()
        with contextlib.suppress(OSError):
            temp.unlink()


def _commit(temp: Path, path: Path, overwrite: bool) -> None:
    """Give the finished temporary file its final name."""
    if _refuse_link(path) and not overwrite:
        raise FileExistsError(errno.EEXIST, "already exists", str(path))
    if overwrite:
        os.replace(temp, path)
        return
    try:
        os.link(temp, path)  # fails if the name was taken meanwhile: never clobbers
    except FileExistsError:
        raise FileExistsError(errno.EEXIST, "already exists", str(path)) from None
    except OSError as error:
        if error.errno not in (errno.EPERM, errno.ENOTSUP, errno.EOPNOTSUPP, errno.EXDEV, errno.EMLINK):
            raise
        # A file system without hard links: take the name exclusively, then move the data in.
        fd = os.open(path, os.O_WRONLY | os.O_CREAT | os.O_EXCL | _NOFOLLOW | _BINARY, 0o600)
        os.close(fd)
        os.replace(temp, path)


def atomic_write(path: Path | str, data: bytes | str, overwrite: bool = False, mode: int | None = None) -> None:
    """Write `data` (str as UTF-8) to `path` atomically; see `atomic_writer` for the guarantees."""
    payload = data.encode("utf-8") if isinstance(data, str) else data
    with atomic_writer(path, overwrite=overwrite, mode=mode) as handle:
        handle.write(payload)


def write_problem(error: OSError) -> str:
    """The words for a failed write: 'already exists', 'is a symbolic link ...', or the system's reason."""
    if isinstance(error, FileExistsError):
        return "already exists"
    return error.strerror or type(error).__name__
