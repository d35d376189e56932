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


def formulary_location(path: Path, key_path: str | None, line: int | None) -> str:
    """`FILE:LINE: key.path`, leaving out what is not known."""
    where = str(path)
    if line is not None:
        where += f":{line}"
    if key_path:
        where += f": {key_path}"
    return where


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
        self.where = formulary_location(self.path, key_path, line)
        super().__init__(f"formulary {self.where}: {problem}")

    def located(self) -> str:
        """`FILE:LINE: key.path: problem`, the compiler-style line `formulary validate` prints."""
        return f"{self.where}: {self.problem}"


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


class FormularyWarning:
    """Something in a formulary file worth a second look that does not stop it being used.

    Never raised: `formulary validate` lists warnings after the errors and
    still exits 0 when there are only warnings.  Same fields as FormularyError
    so both print the same way.
    """

    def __init__(self, path: Path | str, problem: str, key_path: str | None = None, line: int | None = None) -> None:
        self.path = Path(path)
        self.problem = problem
        self.key_path = key_path
        self.line = line
        self.where = formulary_location(self.path, key_path, line)

    def located(self) -> str:
        return f"{self.where}: warning: {self.problem}"

    def __str__(self) -> str:
        return f"formulary {self.located()}"

    def __repr__(self) -> str:
        return f"FormularyWarning({self.located()!r})"


class EpisodeFileError(OsmodoseError):
    """An episode file (a patient's course of therapy) cannot be read or written.

    Always names the file, so a user with several episodes open knows which one
    is damaged; a file that failed to load is never written over.
    """

    def __init__(self, path: Path | str, problem: str) -> None:
        self.path = Path(path)
        self.problem = problem
        super().__init__(f"episode {self.path}: {problem}")


class LogError(OsmodoseError):
    """The verification log cannot be read or appended to.

    Names the file and, when known, the line; a verification whose record
    cannot be appended is reported as not saved, never shown as done.
    """

    def __init__(self, path: Path | str, problem: str, line: int | None = None) -> None:
        self.path = Path(path)
        self.problem = problem
        self.line = line
        where = str(self.path) + (f":{line}" if line is not None else "")
        super().__init__(f"log {where}: {problem}")


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


class SigningKeyError(OsmodoseError):
    """The unit's key for signing verification records cannot be made, read or used.

    Names the key file; never prints the key.
    """

    def __init__(self, path: Path | str, problem: str) -> None:
        self.path = Path(path)
        self.problem = problem
        super().__init__(f"signing key {self.path}: {problem}")


class OutputError(OsmodoseError):
    """What a command made could not be written out (a full disk, a closed pipe); the message says what was kept."""
