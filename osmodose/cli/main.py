"""Entry point: `osmodose SUBCOMMAND ...`, or the app when no subcommand is given.

The subcommands are data (`commands.COMMANDS`: word, module, one-line help).
`main` finds which one was given with a parser that knows only their names,
then imports and registers that module alone: the others stay placeholders
that carry their help, so `osmodose --help` still lists every command, and
`osmodose check` (timed against bare pint start-up) never imports the
formulary tools, the course or the log.  Heavy imports belong inside
handlers.  Every OsmodoseError becomes one line on stderr and exit status 2;
no traceback reaches a user.
"""

from __future__ import annotations

import argparse
import importlib
import os
import sys
from collections.abc import Sequence
from typing import NoReturn

from osmodose import __version__
from osmodose.cli.commands import COMMANDS
from osmodose.cli.exit_codes import BAD_INPUT, BROKEN_PIPE
from osmodose.errors import OsmodoseError

#: The subcommand modules, in the order `--help` lists them.
SUBCOMMANDS: tuple[str, ...] = tuple(command.module for command in COMMANDS)

#: `build_parser(ALL)`: every subcommand registered for real (tests, completeness).
ALL = "*"


class _Parser(argparse.ArgumentParser):
    """argparse with a one-line error and exit status 2."""

    def error(self, message: str) -> NoReturn:
        sys.stderr.write(f"{self.prog}: {message} (see {self.prog} --help)\n")
        raise SystemExit(BAD_INPUT)


def build_parser(command: str | None = ALL) -> argparse.ArgumentParser:
    """The parser with `command`'s module registered, every other command a placeholder.

    A placeholder lists the command in `--help` and takes whatever follows its
    word, so a first pass can tell which command was given without importing
    any.  `command=None` registers none; `ALL` registers every one.
    """
    parser = _Parser(
        prog="osmodose",
        description=(
            "Hyperosmolar therapy and sodium fluid dosing support for intensive care. "
            "Without a subcommand, opens the bedside app. Decision support only: verify "
            "against local protocol and licensed clinical judgement."
        ),
    )
    parser.add_argument("--version", action="version", version=f"osmodose {__version__}")
    parser.add_argument(
        "--formulary", metavar="FILE", default=None, help="formulary for the app (default: the bundled demo formulary)"
    )
    parser.add_argument(
        "--episode", metavar="FILE", default=None, help="open the app on this episode file's course (see course new)"
    )
    subparsers = parser.add_subparsers(title="commands", metavar="COMMAND", parser_class=_Parser)
    for item in COMMANDS:
        if command in (ALL, item.name):
            importlib.import_module(item.module).register(subparsers)
        else:
            placeholder = subparsers.add_parser(item.name, help=item.help, add_help=False)
            placeholder.add_argument("rest", nargs=argparse.REMAINDER, help=argparse.SUPPRESS)
            placeholder.set_defaults(_placeholder=item.name)
    return parser


def given_command(argv: Sequence[str]) -> str | None:
    """The subcommand word in `argv` as argparse finds it (options before it included), or None."""
    args, _ = build_parser(None).parse_known_args(argv)
    return getattr(args, "_placeholder", None)


def main(argv: Sequence[str] | None = None) -> int:
    argv = list(sys.argv[1:] if argv is None else argv)
    args = build_parser(given_command(argv)).parse_args(argv)
    try:
        handler = getattr(args, "handler", None)
        if handler is None:
            return _run_app(args)
        return int(handler(args))
    except OsmodoseError as error:
        sys.stderr.write(f"osmodose: {error}\n")
        return BAD_INPUT
    except KeyboardInterrupt:
        sys.stderr.write("osmodose: interrupted\n")
        return 130
    except BrokenPipeError:
        # The reader stopped early (`osmodose formulary show | head`): not an error to
        # report, and Python must not complain again when it flushes stdout at exit.
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        return BROKEN_PIPE


def _run_app(args: argparse.Namespace) -> int:
    try:
        app_module = importlib.import_module("osmodose.app.launch")
    except ModuleNotFoundError as error:
        if error.name and error.name.startswith("osmodose.app"):
            sys.stderr.write("osmodose: the app is not built yet; use a subcommand (osmodose --help)\n")
            return BAD_INPUT
        raise
    return int(app_module.launch(args.formulary, args.episode))
