"""Where the verification log lives when no path is given: a per-user state file.

Order of choice: --log, then $OSMODOSE_LOG, then the platform's per-user
state folder (stdlib only, following the XDG base directory convention on
Linux and the usual folders elsewhere).  A log is state kept by the program
for its user, not configuration and not a cache that may be deleted.
"""

from __future__ import annotations

import os
import sys
from collections.abc import Mapping
from pathlib import Path

LOG_FILE_NAME = "verifications.jsonl"
ENV_VAR = "OSMODOSE_LOG"


#: Per platform, where a per-user folder of each kind lives: (Windows variable and fallback below home,
#: macOS folder below home, XDG variable and fallback below home).
_FOLDERS: dict[str, tuple[str, tuple[str, ...], tuple[str, ...], str, tuple[str, ...]]] = {
    "state": ("LOCALAPPDATA", ("AppData", "Local"), ("Library", "Application Support"), "XDG_STATE_HOME",
              (".local", "state")),
    "config": ("APPDATA", ("AppData", "Roaming"), ("Library", "Preferences"), "XDG_CONFIG_HOME", (".config",)),
}  # fmt: skip


def user_file(
    kind: str,
    env_var: str,
    name: str,
    env: Mapping[str, str] | None = None,
    platform: str | None = None,
    home: Path | None = None,
) -> Path:
    """`$env_var`, else `name` in osmodose's per-user folder of `kind` ("state" or "config") for this platform."""
    env = os.environ if env is None else env
    platform = sys.platform if platform is None else platform
    home = Path.home() if home is None else home
    if env.get(env_var, "").strip():
        return Path(env[env_var]).expanduser()
    windows, windows_fallback, mac, xdg, xdg_fallback = _FOLDERS[kind]
    if platform.startswith("win"):
        base = Path(env[windows]) if env.get(windows) else home.joinpath(*windows_fallback)
    elif platform == "darwin":
        base = home.joinpath(*mac)
    else:
        chosen = env.get(xdg, "").strip()
        # The XDG convention ignores a relative path.
        base = Path(chosen) if chosen and Path(chosen).is_absolute() else home.joinpath(*xdg_fallback)
    return base / "osmodose" / name


def default_log_path(
    env: Mapping[str, str] | None = None, platform: str | None = None, home: Path | None = None
) -> Path:
    """The per-user log: $OSMODOSE_LOG, else the state folder for this platform."""
    return user_file("state", ENV_VAR, LOG_FILE_NAME, env, platform, home)


def log_path(option: str | None, env: Mapping[str, str] | None = None) -> Path:
    """The log to use: the --log option when given, else the default."""
    if option is not None and option.strip():
        return Path(option).expanduser()
    return default_log_path(env)
