"""Reading and writing episode files without ever losing one.

A file that fails to load is reported with its name and left exactly as it
is: every command that changes an episode loads it first and writes only what
loaded, so a corrupt or half-written file can never be replaced by a guess.
Reading is bounded (a regular file of at most 50 MB, strict JSON: no repeated
key, no endless number, no nesting deeper than the format) so no file can
hang osmodose or end in a traceback.

Writes go through `storage.atomic_write` (a temporary file in the same folder,
fsync, then renamed into place), so a crash or a full disk leaves either the
old file or the new one, never half of each.  Read-check-write is done under
an exclusive lock on the episode's folder (fcntl), so two writers (two
commands, the app and a command) cannot both read the same file and the
second save silently drop the first one's entry.  A temporary file left by a
writer that was killed is removed by the next save, which reports it.
"""

from __future__ import annotations

import contextlib
import hashlib
import json
import os
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any

from pydantic import ValidationError

from osmodose.course.episode import FORMAT_VERSION, Episode
from osmodose.course.migrations import MIGRATIONS, MigrationError, migrate
from osmodose.errors import EpisodeFileError, file_problem
from osmodose.storage.atomic import DestinationIsALink, atomic_write, stale_temporaries, write_problem
from osmodose.storage.bounded import EPISODE_MAX_BYTES, FileRefused, os_reason, read_bounded
from osmodose.storage.strict_json import JsonProblem, load_strict

try:  # POSIX; elsewhere a second concurrent writer is not excluded.
    import fcntl
except ImportError:  # pragma: no cover - Windows
    fcntl = None  # type: ignore[assignment]  # the module's stub has no None; writers check for it

UNCHANGED = "the file was not changed"
#: root -> removed[] -> {entry} -> {corrections} -> [..] -> {correction} -> {previous}: 7; one spare.
MAX_DEPTH = 8
Note = Callable[[str], None]


def load_episode(path: Path | str) -> Episode:
    """The episode in `path`, migrated to the current format; EpisodeFileError if it cannot be used."""
    return read_episode(path)[0]


def _digest(path: Path) -> str | None:
    try:
        return hashlib.sha256(read_bounded(path, EPISODE_MAX_BYTES)).hexdigest()
    except FileNotFoundError:
        return None
    except (OSError, FileRefused):
        return ""  # unreadable now: never equal to what was read


def read_episode(path: Path | str) -> tuple[Episode, str]:
    """The episode and the SHA-256 of the bytes it came from, to pass to `save_episode(expect_sha256=...)`.

    A screen that keeps an episode open hands the digest back when it saves,
    so an entry added meanwhile by another command is never silently lost.
    """
    path = Path(path)
    try:
        raw = read_bounded(path, EPISODE_MAX_BYTES)
    except FileRefused as refused:
        raise EpisodeFileError(path, f"{refused.problem}; {UNCHANGED}") from None
    except OSError as error:
        raise EpisodeFileError(path, f"cannot be read: {os_reason(error)}") from None
    digest = hashlib.sha256(raw).hexdigest()
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError:
        raise EpisodeFileError(path, f"is not UTF-8 text; {UNCHANGED}") from None
    if not text.strip():
        raise EpisodeFileError(path, f"is empty (half-written?); {UNCHANGED}")
    try:
        data = load_strict(text, MAX_DEPTH)
    except json.JSONDecodeError as error:
        raise EpisodeFileError(
            path,
            f"is not valid JSON at line {error.lineno}, column {error.colno} ({error.msg}): "
            f"half-written or corrupt; {UNCHANGED}",
        ) from None
    except JsonProblem as problem:
        where = f"line {problem.line}: " if problem.line is not None else ""
        raise EpisodeFileError(path, f"{where}{problem.problem}; {UNCHANGED}") from None
    return episode_from_data(data, path), digest


def episode_from_data(data: Any, path: Path | str) -> Episode:
    """Validate parsed JSON (any supported version) into an Episode; `path` names it in errors."""
    if not isinstance(data, dict):
        raise EpisodeFileError(path, f"is not an episode: the top level is not a JSON object; {UNCHANGED}")
    version = data.get("format_version")
    if version is None:
        raise EpisodeFileError(path, f"has no format_version: not an osmodose episode file; {UNCHANGED}")
    if isinstance(version, bool) or not isinstance(version, int):
        raise EpisodeFileError(path, f"format_version {version!r} is not a whole number; {UNCHANGED}")
    if version > FORMAT_VERSION:
        raise EpisodeFileError(
            path,
            f"format_version {version} is newer than this osmodose reads (up to {FORMAT_VERSION}): "
            f"use a newer osmodose; {UNCHANGED}",
        )
    if version < FORMAT_VERSION and version not in MIGRATIONS:
        raise EpisodeFileError(path, f"format_version {version} is not one osmodose knows; {UNCHANGED}")
    try:
        current = migrate(data, version)
        return Episode.model_validate(current, context={"from_file": True})
    except MigrationError as error:
        raise EpisodeFileError(path, f"{error}; {UNCHANGED}") from None
    except ValidationError as error:
        raise EpisodeFileError(path, f"{_describe(error)}; {UNCHANGED}") from None


def _describe(error: ValidationError) -> str:
    """The first problem as `key.path: message`, list positions counted from 1."""
    items = error.errors()
    first = items[0]
    parts: list[str] = []
    for part in first["loc"]:
        if isinstance(part, int):
            parts[-1:] = [f"{parts[-1] if parts else ''}[{part + 1}]"]
        elif not str(part).startswith("function-after"):
            parts.append(str(part))
    where = ".".join(parts)
    message = file_problem(first)
    extra = len(items) - 1
    more = f" (and {extra} more problem{'s' if extra > 1 else ''})" if extra else ""
    return f"{where}: {message}{more}" if where else f"{message}{more}"  # a whole-file check names its own place


CHANGED_MEANWHILE = "changed on disk since it was read (another command or window?); nothing was written: reload it"
STALE_NOTE = "removed {name}, a copy left unfinished by an interrupted save (the episode itself is whole)"


@contextlib.contextmanager
def episode_lock(path: Path | str) -> Iterator[None]:
    """Hold the exclusive lock of the episode's folder: one writer at a time reads, checks and writes.

    The lock is on the folder, not the file: the file is replaced by a rename
    on every save, so a lock on it would be on a file already gone.
    """
    path = Path(path)
    folder = path.parent if str(path.parent) else Path(".")
    if fcntl is None:  # pragma: no cover - Windows
        yield
        return
    try:
        fd = os.open(folder, os.O_RDONLY)
    except OSError as error:
        raise EpisodeFileError(path, f"cannot be locked for writing: {os_reason(error)}; {UNCHANGED}") from None
    try:
        fcntl.flock(fd, fcntl.LOCK_EX)
        yield
    finally:
        os.close(fd)  # closing the descriptor releases the lock


def _remove_stale(path: Path, note: Note | None) -> None:
    """Temporary copies left by a killed writer (only under the lock, when no other writer can be at work)."""
    if fcntl is None:  # pragma: no cover - Windows: no lock, so another writer's copy may be in progress
        return
    for stale in stale_temporaries(path):
        with contextlib.suppress(FileNotFoundError):
            os.unlink(stale)
            if note is not None:
                note(STALE_NOTE.format(name=stale))


def _save_locked(episode: Episode, path: Path, create: bool, expect_sha256: str | None, note: Note | None) -> None:
    _remove_stale(path, note)
    if create and (path.exists() or path.is_symlink()):
        raise EpisodeFileError(path, "already exists; it was not overwritten")
    if expect_sha256 is not None and _digest(path) != expect_sha256:
        raise EpisodeFileError(path, CHANGED_MEANWHILE)
    try:
        atomic_write(path, episode.to_json_text(), overwrite=not create, mode=0o600 if create else None)
    except FileExistsError:
        raise EpisodeFileError(path, "already exists; it was not overwritten") from None
    except DestinationIsALink:
        raise EpisodeFileError(
            path,
            f"is a symbolic link: osmodose never writes through or over a link (open the file itself); {UNCHANGED}",
        ) from None
    except OSError as error:
        raise EpisodeFileError(path, f"cannot be written: {write_problem(error)}") from None


def save_episode(
    episode: Episode,
    path: Path | str,
    create: bool = False,
    expect_sha256: str | None = None,
    note: Note | None = None,
) -> None:
    """Write `episode` to `path` atomically, under the episode's lock.

    With `create`, never replace an existing file; with `expect_sha256`, write
    only if the file still holds the bytes it was read from (checked under
    the lock, so no other writer can slip in between the check and the
    write).  `note` is told of anything worth saying that is not an error (a
    stale temporary file removed).
    """
    path = Path(path)
    with episode_lock(path):
        _save_locked(episode, path, create, expect_sha256, note)


def update_episode(path: Path | str, change: Callable[[Episode], Episode], note: Note | None = None) -> Episode:
    """Load, change, save, all under the episode's lock: the way a command alters a file.

    A bad file is never written over, and an entry another writer saved
    meanwhile is never lost: the change is made to the file as it is now.
    """
    path = Path(path)
    with episode_lock(path):
        episode, digest = read_episode(path)
        changed = change(episode)
        _save_locked(changed, path, False, digest, note)
    return changed
