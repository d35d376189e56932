"""Entry point: `osmodose SUBCOMMAND ...`, or the app when no subcommand is given.

Subcommand modules are listed in `SUBCOMMANDS`; each has `register(subparsers)`
and sets a `handler`.  Registration must stay cheap (no textual, no plotting
import): `osmodose check` is timed against bare pint start-up, so heavy
imports belong inside handlers.  Every OsmodoseError becomes one line on
stderr and exit status 2; no traceback reaches a user.
"""

from __future__ import annotations

import argparse
import importlib
import os
import sys
from collections.abc import Sequence
from typing import NoReturn

from osmodose import __version__
from osmodose.cli.exit_codes import APP_EPILOG, BAD_INPUT, BROKEN_PIPE
from osmodose.errors import OsmodoseError

SUBCOMMANDS: tuple[str, ...] = (
    "osmodose.cli.check_cmd",
    "osmodose.cli.formulary_cmd",
    "osmodose.cli.course_cmd",
    "osmodose.cli.verify_cmd",
    "osmodose.cli.log_cmd",
    "osmodose.cli.audit_cmd",
)


class _Parser(argparse.ArgumentParser):
    """argparse with a one-line error and exit status 2."""

    def error(self, message: str) -> NoReturn:
        sys.stderr.write(f"{self.prog}: {message} (see {self.prog} --help)\n")
        raise SystemExit(BAD_INPUT)


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(
        prog="osmodose",
        description=(
            "Hyperosmolar therapy and sodium fluid dosing support for intensive care. "
            "Without a subcommand, opens the bedside app. Decision support only: verify "
            "against local protocol and licensed clinical judgement."
        ),
        epilog=APP_EPILOG,
    )
    parser.add_argument("--version", action="version", version=f"osmodose {__version__}")
    parser.add_argument(
        "--formulary", metavar="FILE", default=None, help="formulary for the app (default: the bundled demo formulary)"
    )
    parser.add_argument(
        "--episode", metavar="FILE", default=None, help="open the app on this episode file's course (see course new)"
    )
    subparsers = parser.add_subparsers(title="commands", metavar="COMMAND", parser_class=_Parser)
    for name in SUBCOMMANDS:
        importlib.import_module(name).register(subparsers)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    argv = list(sys.argv[1:] if argv is None else argv)
    parser = build_parser()
    args = parser.parse_args(argv)
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
