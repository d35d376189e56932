"""Typed errors for everything a user can get wrong.

Every error a user may see is an `OsmodoseError`: the command line and the app
catch that one class, print `str(error)` on one line and never a traceback.
Messages are built here, once, from the structured fields, so tests can
compare them word for word and front ends never assemble their own wording.
"""

from __future__ import annotations

from collections.abc import Mapping
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

    `field` is the field's key (the command-line option without its dashes),
    `value` what they typed, `accepted` the range or form that would be accepted.
    `name` is what the message calls the field when the place it was typed
    shows it under other words (the app's "target Na change" for
    `target-rise`); by default the key, as typed on the command line.
    """

    def __init__(
        self, field: str, value: object, problem: str, accepted: str | None = None, name: str | None = None
    ) -> None:
        self.field = field
        self.value = value
        self.problem = problem
        self.accepted = accepted
        self.name = name or field
        shown = self.name
        text = f"{shown}: {value!s} {problem}" if value is not None and value != "" else f"{shown}: {problem}"
        if accepted:
            text += f" (accepted: {accepted})"
        super().__init__(text)

    def named(self, names: Mapping[str, str]) -> InputError:
        """The same error calling its field by `names[field]` (the words shown where it was typed)."""
        name = names.get(self.field)
        if name is None or name == self.name:
            return self
        return InputError(self.field, self.value, self.problem, self.accepted, name)


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


def value_kind(value: object, *, none: str, table: str, other: str) -> str:
    """What a value read from a file is, in words: "text", "a number", "a list", ...

    JSON and TOML share the words for true or false, numbers, text and lists;
    each format names the rest its own way: nothing (`none`: JSON's "null"), a
    table or object (`table`), anything else (`other`: TOML's "a date or time").
    """
    if value is None:
        return none
    if isinstance(value, bool):
        return "true or false"
    if isinstance(value, (int, float)):
        return "a number"
    if isinstance(value, str):
        return "text"
    if isinstance(value, (list, tuple)):
        return "a list"
    return table if isinstance(value, Mapping) else other


def _json_kind(value: object) -> str:
    """What a JSON value is, in words."""
    return value_kind(value, none="null", table="an object", other="an object")


def _json_value(value: object) -> str:
    if isinstance(value, str):
        return f'"{value}"'
    return "null" if value is None else str(value).lower() if isinstance(value, bool) else str(value)


def file_problem(item: Mapping[str, object]) -> str:
    """One problem found validating a JSON file (an episode), in osmodose's words, never the library's.

    `item` is one entry of a validation error's list (`type`, `input`, `ctx`,
    `msg`); the message says what is wrong and what is accepted.
    """
    kind = str(item.get("type", ""))
    value = item.get("input")
    ctx = item.get("ctx")
    shown = _json_value(value)
    if kind == "missing":
        return "is required but missing"
    if kind == "extra_forbidden":
        return "is not a key osmodose knows here (a misspelt key would lose its value)"
    if kind == "value_error":
        return str(item.get("msg", "")).removeprefix("Value error, ")
    if kind == "literal_error" and isinstance(ctx, Mapping):
        allowed = str(ctx.get("expected", "")).replace("'", '"')
        return f"{shown} is not one osmodose knows (accepted: {allowed})"
    if kind in ("string_type", "str_type"):
        return f"is {_json_kind(value)}, not text (accepted: text in double quotes)"
    if kind in ("string_too_short", "too_short"):
        return "is empty (accepted: a value, not an empty one)"
    if kind.startswith(("float", "int")) or kind == "finite_number":
        return f"{shown} is not a number (accepted: a JSON number, e.g. 70.5)"
    if kind.startswith(("datetime", "date", "timezone")):
        return f'{shown} is not a time with its UTC offset (accepted: ISO 8601, e.g. "2026-12-01T08:30:00+00:00")'
    if kind in ("list_type", "tuple_type"):
        return f"is {_json_kind(value)}, not a list (accepted: a JSON list in square brackets)"
    if kind in ("model_type", "dict_type", "model_attributes_type"):
        return f"is {_json_kind(value)}, not an object (accepted: a JSON object in curly brackets)"
    return f"{shown} cannot be used here"


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


class LabsFileError(OsmodoseError):
    """A labs file (`--labs FILE`, `course import`) cannot be used, or a value a case needs from it cannot.

    Names the file and, when known, the resource (`Observation/na-2`), its LOINC
    code and the field it gives, so the record can be found and fixed at its
    source.  Nothing is taken from a file while one of these stands.
    """

    def __init__(
        self,
        path: Path | str,
        problem: str,
        resource: str | None = None,
        loinc: str | None = None,
        field: str | None = None,
        accepted: str | None = None,
    ) -> None:
        self.path = Path(path)
        self.problem = problem
        self.resource = resource
        self.loinc = loinc
        self.field = field
        self.accepted = accepted
        text = f"labs {self.path}: " + (f"{resource_label(resource, loinc, field)}: " if resource else "") + problem
        if accepted:
            text += f" (accepted: {accepted})"
        super().__init__(text)


def resource_label(resource: str | None, loinc: str | None = None, field: str | None = None) -> str:
    """`Observation/na-2 (LOINC 2951-2, sodium)`: how a line about one resource names it."""
    inside = ", ".join(part for part in (f"LOINC {loinc}" if loinc else None, field) if part)
    return f"{resource}" + (f" ({inside})" if inside else "")


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
