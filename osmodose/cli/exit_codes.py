"""Exit statuses shared by every subcommand."""

from __future__ import annotations

OK = 0
INVALID = 1  # a file checked and found invalid (formulary validate, log verify)
BAD_INPUT = 2
WARN = 3
REFUSE = 4
BROKEN_PIPE = 141  # the reader closed the pipe: 128 + SIGPIPE, as a shell reports it

BY_STATUS = {"ok": OK, "warn": WARN, "refuse": REFUSE}
