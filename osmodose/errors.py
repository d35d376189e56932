"""Typed errors for everything a user can get wrong.

Every error a user may see is an `OsmodoseError`: the command line and the app
catch that one class, print `str(error)` on one line and never a traceback.
Messages are built here, once, from the structured fields, so tests can
compare them word for word and front ends never assemble their own wording.
"""

from __future__ import annotations

from pathlib import Path


class OsmodoseError(Exception):
    """Base of every error meant for a user; `str()` is the whole message."""

    def __init__(self, message: str) -> None:
        super().__init__(message)
        self.message = message

    def __str__(self) -> str:
        return self.message


class InputError(OsmodoseError):
    """A value the user typed is unreadable, in the wrong unit, or implausible.

    `field` is the name the user knows the value by (the option or form field),
    `value` what they typed, `accepted` the range or form that would be accepted.
    """

    def __init__(self, field: str, value: object, problem: str, accepted: str | None = None) -> None:
        self.field = field
        self.value = value
        self.problem = problem
        self.accepted = accepted
        text = f"{field}: {value!s} {problem}" if value is not None and value != "" else f"{field}: {problem}"
        if accepted:
            text += f" (accepted: {accepted})"
        super().__init__(text)


class FormularyError(OsmodoseError):
    """The unit's formulary file cannot be used.

    Names the file, the dotted key path inside it (e.g. `agents[2].concentration`)
    and the line where that key stands, when those are known.
    """

    def __init__(
        self,
        path: Path | str,
        problem: str,
        key_path: str | None = None,
        line: int | None = None,
    ) -> None:
        self.path = Path(path)
        self.problem = problem
        self.key_path = key_path
        self.line = line
        where = str(self.path)
        if line is not None:
            where += f":{line}"
        if key_path:
            where += f": {key_path}"
        super().__init__(f"formulary {where}: {problem}")


class FormularyProblems(FormularyError):
    """Several problems in one formulary file, all found in one pass.

    The first problem is the message, so a one-line caller still names a key
    and a line; `problems` holds every one for the validator to list.
    """

    def __init__(self, problems: list[FormularyError]) -> None:
        if not problems:
            raise ValueError("FormularyProblems needs at least one problem")
        self.problems = problems
        first = problems[0]
        extra = len(problems) - 1
        problem = first.problem + (f" (and {extra} more problem{'s' if extra > 1 else ''})" if extra else "")
        super().__init__(first.path, problem, first.key_path, first.line)


class OrdersFileError(OsmodoseError):
    """An orders file for `osmodose audit` cannot be read at all: missing, empty, or a bad header.

    A bad row never raises this: it is reported with its row number and the
    other rows go on.  `column` is the header field as written (with its unit
    suffix) and `position` its place in the header, counted from 1.
    """

    def __init__(
        self,
        path: Path | str,
        problem: str,
        column: str | None = None,
        position: int | None = None,
        accepted: str | None = None,
    ) -> None:
        self.path = Path(path)
        self.problem = problem
        self.column = column
        self.position = position
        self.accepted = accepted
        text = f"orders {self.path}"
        if column is not None:
            text += f": column {column}"
            if position is not None:
                text += f" (header field {position})"
        text += f": {problem}"
        if accepted:
            text += f" (accepted: {accepted})"
        super().__init__(text)
