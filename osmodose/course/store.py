"""Reading and writing episode files without ever losing one.

A file that fails to load is reported with its name and left exactly as it
is: every command that changes an episode loads it first and writes only what
loaded, so a corrupt or half-written file can never be replaced by a guess.
Writes go to a temporary file in the same folder, are flushed to disk
(fsync), and are then renamed over the old file (os.replace, atomic on one
file system), so a crash or a full disk leaves either the old file or the new
one, never half of each.
"""

from __future__ import annotations

import contextlib
import hashlib
import json
import os
import stat
import tempfile
from collections.abc import Callable
from pathlib import Path
from typing import Any

from pydantic import ValidationError

from osmodose.course.episode import FORMAT_VERSION, Episode
from osmodose.course.migrations import MIGRATIONS, MigrationError, migrate
from osmodose.errors import EpisodeFileError, file_problem
from osmodose.storage.durable import fsync_directory

UNCHANGED = "the file was not changed"


def load_episode(path: Path | str) -> Episode:
    """The episode in `path`, migrated to the current format; EpisodeFileError if it cannot be used."""
    return read_episode(path)[0]


def _digest(path: Path) -> str | None:
    try:
        return hashlib.sha256(path.read_bytes()).hexdigest()
    except FileNotFoundError:
        return None


def read_episode(path: Path | str) -> tuple[Episode, str]:
    """The episode and the SHA-256 of the bytes it came from, to pass to `save_episode(expect_sha256=...)`.

    A screen that keeps an episode open hands the digest back when it saves,
    so an entry added meanwhile by another command is never silently lost.
    """
    path = Path(path)
    try:
        raw = path.read_bytes()
    except OSError as error:
        raise EpisodeFileError(path, f"cannot be read: {error.strerror or type(error).__name__}") from None
    digest = hashlib.sha256(raw).hexdigest()
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError:
        raise EpisodeFileError(path, f"is not UTF-8 text; {UNCHANGED}") from None
    if not text.strip():
        raise EpisodeFileError(path, f"is empty (half-written?); {UNCHANGED}")
    try:
        data = json.loads(text)
    except json.JSONDecodeError as error:
        raise EpisodeFileError(
            path,
            f"is not valid JSON at line {error.lineno}, column {error.colno} ({error.msg}): "
            f"half-written or corrupt; {UNCHANGED}",
        ) from None
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
        return Episode.model_validate(current)
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
    where = ".".join(parts) or "(top level)"
    message = file_problem(first)
    extra = len(items) - 1
    more = f" (and {extra} more problem{'s' if extra > 1 else ''})" if extra else ""
    return f"{where}: {message}{more}"


CHANGED_MEANWHILE = "changed on disk since it was read (another command or window?); nothing was written: reload it"


def save_episode(episode: Episode, path: Path | str, create: bool = False, expect_sha256: str | None = None) -> None:
    """Write `episode` to `path` atomically.

    With `create`, never replace an existing file; with `expect_sha256`, write
    only if the file still holds the bytes it was read from.
    """
    path = Path(path)
    if create and (path.exists() or path.is_symlink()):
        raise EpisodeFileError(path, "already exists; it was not overwritten")
    folder = path.parent if str(path.parent) else Path(".")
    try:
        mode = stat.S_IMODE(path.stat().st_mode) if not create else None
    except FileNotFoundError:
        mode = None
    tmp_name: str | None = None
    try:
        fd, tmp_name = tempfile.mkstemp(dir=folder, prefix=f".{path.name}.", suffix=".tmp")
        with os.fdopen(fd, "w", encoding="utf-8") as handle:
            handle.write(episode.to_json_text())
            handle.flush()
            os.fsync(handle.fileno())
        if mode is not None:
            os.chmod(tmp_name, mode)
        if expect_sha256 is not None and _digest(path) != expect_sha256:
            raise EpisodeFileError(path, CHANGED_MEANWHILE)
        os.replace(tmp_name, path)
        tmp_name = None
        fsync_directory(folder)
    except OSError as error:
        raise EpisodeFileError(path, f"cannot be written: {error.strerror or type(error).__name__}") from None
    finally:
        if tmp_name is not None:
            with contextlib.suppress(OSError):
                os.unlink(tmp_name)


def update_episode(path: Path | str, change: Callable[[Episode], Episode]) -> Episode:
    """Load, change, save: the way a command alters a file, so a bad file is never written over.

    The save goes ahead only if the file still holds what was loaded.
    """
    episode, digest = read_episode(path)
    changed = change(episode)
    save_episode(changed, path, expect_sha256=digest)
    return changed
