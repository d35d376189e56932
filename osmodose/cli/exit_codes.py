"""Exit statuses shared by every subcommand."""

from __future__ import annotations

OK = 0
INVALID = 1  # a file checked and found invalid (formulary validate, log verify)
BAD_INPUT = 2
WARN = 3
REFUSE = 4

BY_STATUS = {"ok": OK, "warn": WARN, "refuse": REFUSE}
