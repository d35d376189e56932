"""Exit statuses shared by every subcommand, and the lines each command's --help ends with."""

from __future__ import annotations

OK = 0
INVALID = 1  # a file checked and found invalid (formulary validate, log verify)
BAD_INPUT = 2
WARN = 3
REFUSE = 4
BROKEN_PIPE = 141  # the reader closed the pipe: 128 + SIGPIPE, as a shell reports it

BY_STATUS = {"ok": OK, "warn": WARN, "refuse": REFUSE}

_BAD = "2 bad input or a formulary that cannot be used (one line on stderr naming the field or the file)"
#: `check`, `course show` and `course plan`.
STATUS_EPILOG = f"exit status: 0 ok, 3 warn, 4 refuse, {_BAD}."
VERIFY_EPILOG = (
    "exit status: 0 released (also with accepted warnings), 3 held (a warning not accepted), 4 refused, "
    "2 bad input or a log that cannot be appended to (then nothing is verified)."
)
DONE_EPILOG = f"exit status: 0 done, {_BAD}."
VALIDATE_EPILOG = "exit status: 0 valid (warnings allowed), 1 not valid, 2 the file cannot be read."
DIFF_EPILOG = "exit status: 0 no changes, 1 changes, 2 a file cannot be used."
LOG_EPILOG = (
    "exit status: 0 the log (or the record shown) is intact, 1 a problem was found (an altered, missing, "
    "damaged or incomplete record), 2 the log cannot be read or has no such record."
)
AUDIT_EPILOG = (
    "exit status: 0 every row audited, 1 some rows could not be (each is listed with its reason), "
    "2 the orders file or the formulary cannot be used."
)
APP_EPILOG = (
    "exit status: 0 done; check, course show and course plan: 3 warn, 4 refuse; verify: 3 held, 4 refused; "
    "formulary validate|diff, log and audit: 1 a problem found; 2 bad input or a file that cannot be used. "
    "Each command's --help says which."
)
