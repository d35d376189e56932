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


def default_log_path(
    env: Mapping[str, str] | None = None, platform: str | None = None, home: Path | None = None
) -> Path:
    """The per-user log: $OSMODOSE_LOG, else the state folder for this platform."""
    env = os.environ if env is None else env
    platform = sys.platform if platform is None else platform
    home = Path.home() if home is None else home
    if env.get(ENV_VAR, "").strip():
        return Path(env[ENV_VAR]).expanduser()
    if platform.startswith("win"):
        base = Path(env["LOCALAPPDATA"]) if env.get("LOCALAPPDATA") else home / "AppData" / "Local"
    elif platform == "darwin":
        base = home / "Library" / "Application Support"
    else:
        state = env.get("XDG_STATE_HOME", "").strip()
        # The XDG convention ignores a relative path.
        base = Path(state) if state and Path(state).is_absolute() else home / ".local" / "state"
    return base / "osmodose" / LOG_FILE_NAME


def log_path(option: str | None, env: Mapping[str, str] | None = None) -> Path:
    """The log to use: the --log option when given, else the default."""
    if option is not None and option.strip():
        return Path(option).expanduser()
    return default_log_path(env)
