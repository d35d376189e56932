"""The subcommands as data: each one's word, module and one-line help.

`osmodose --help` lists every command from this table alone, and `main`
imports only the module of the command actually given, so the start-up of
`osmodose check` never pays for the other commands' imports.  Each module
takes its `HELP` from here, so the listing and the command's own help agree.
"""

from __future__ import annotations

from typing import NamedTuple


class Command(NamedTuple):
    """A subcommand: the word typed, the module with its `register()`, its one-line help."""

    name: str
    module: str
    help: str


COMMANDS: tuple[Command, ...] = (
    Command(
        "check",
        "osmodose.cli.check_cmd",
        "compute osmolality, total body water, a dose and its sodium projection, and check the limits",
    ),
    Command("formulary", "osmodose.cli.formulary_cmd", "check, inspect, compare and start a unit's formulary file"),
    Command(
        "course",
        "osmodose.cli.course_cmd",
        "a course of therapy: serial labs, doses, pressures and urine outputs in an episode file",
    ),
    Command(
        "verify",
        "osmodose.cli.verify_cmd",
        "re-check an order as written, decide on it, and append an initialled record to the verification log",
    ),
    Command(
        "log",
        "osmodose.cli.log_cmd",
        "the verification log: make the unit's signing key, verify the log's chain and signatures, list, show one",
    ),
    Command(
        "audit",
        "osmodose.cli.audit_cmd",
        "audit a file of past orders against the formulary's limits, row by row, on whole columns",
    ),
)

BY_NAME: dict[str, Command] = {command.name: command for command in COMMANDS}


def help_of(name: str) -> str:
    """The one-line help of a subcommand."""
    return BY_NAME[name].help
