"""Entry point: `osmodose SUBCOMMAND ...`, or the app when no subcommand is given.

The subcommands are data (`commands.COMMANDS`: word, module, one-line help).
`main` finds which one was given with a parser that knows only their names,
then imports and registers that module alone: the others stay placeholders
that carry their help, so `osmodose --help` still lists every command, and
`osmodose check` (timed against bare pint start-up) never imports the
formulary tools, the course or the log.  Heavy imports belong inside
handlers.  Every OsmodoseError becomes one line on stderr and exit status 2;
no traceback reaches a user.  So does output that cannot be written (a full
disk, a closed standard output): the output is flushed before the command
counts as done.

Options are never abbreviated (`--target` is not `--target-rise`), and an
option given twice with different values is an input error: the last one
silently winning once meant a weight of 7 kg instead of 70.
"""

from __future__ import annotations

import argparse
import gc
import importlib
import os
import sys
from collections.abc import Sequence
from typing import Any, NoReturn

from osmodose import __version__
from osmodose.cli.commands import COMMANDS
from osmodose.cli.exit_codes import APP_EPILOG, BAD_INPUT, BROKEN_PIPE
from osmodose.errors import OsmodoseError
from osmodose.safe_text import escape_controls

#: The subcommand modules, in the order `--help` lists them.
SUBCOMMANDS: tuple[str, ...] = tuple(command.module for command in COMMANDS)

#: `build_parser(ALL)`: every subcommand registered for real (tests, completeness).
ALL = "*"


#: Where the options given on the command line are remembered (dest -> (option, value)).
_GIVEN = "_options_given"


def _given(namespace: argparse.Namespace) -> dict[str, tuple[str, object]]:
    return namespace.__dict__.setdefault(_GIVEN, {})


class _StoreOnce(argparse._StoreAction):
    """`store`, except that a second, different value for the same option is an input error."""

    def __call__(
        self,
        parser: argparse.ArgumentParser,
        namespace: argparse.Namespace,
        values: object,
        option_string: str | None = None,
    ) -> None:
        given = _given(namespace)
        if option_string is not None:
            _refuse_conflict(parser, given.get(self.dest), (option_string, values))
            given[self.dest] = (option_string, values)
        setattr(namespace, self.dest, values)


def _refuse_conflict(
    parser: argparse.ArgumentParser, before: tuple[str, object] | None, now: tuple[str, object]
) -> None:
    if before is not None and before[1] != now[1]:
        parser.error(f"{now[0]}: given twice with different values ({before[1]} and {now[1]}): give it once")


class _SubParsers(argparse._SubParsersAction):
    """Subcommands; an option given before the subcommand and again after it must agree too."""

    def __call__(
        self,
        parser: argparse.ArgumentParser,
        namespace: argparse.Namespace,
        values: str | Sequence[Any] | None,
        option_string: str | None = None,
    ) -> None:
        before = dict(_given(namespace))
        super().__call__(parser, namespace, values, option_string)
        after = _given(namespace)
        for dest, now in after.items():
            _refuse_conflict(parser, before.get(dest), now)
        setattr(namespace, _GIVEN, {**before, **after})


class _Parser(argparse.ArgumentParser):
    """argparse with a one-line error, exit status 2, no abbreviations and no silently repeated options."""

    def __init__(self, *args: object, **kwargs: object) -> None:
        kwargs["allow_abbrev"] = False
        super().__init__(*args, **kwargs)  # type: ignore[arg-type]
        self.register("action", None, _StoreOnce)
        self.register("action", "store", _StoreOnce)
        self.register("action", "parsers", _SubParsers)

    def error(self, message: str) -> NoReturn:
        sys.stderr.write(escape_controls(f"{self.prog}: {message} (see {self.prog} --help)") + "\n")
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


def _parse_quietly(argv: Sequence[str]) -> argparse.Namespace:
    """The command's modules imported and its options read, with the cycle collector paused meanwhile.

    Importing pint, numpy, pydantic and our models makes hundreds of thousands
    of objects that live as long as the process; the collector's passes over
    them find nothing to free and cost `osmodose check` about 10 % of its
    start-up.  They are then frozen out of its view (`gc.freeze`), and it runs
    as usual for the command itself (an audit of a million rows, the app).
    """
    gc.disable()
    try:
        return build_parser(given_command(argv)).parse_args(argv)
    finally:
        gc.freeze()
        gc.enable()


def main(argv: Sequence[str] | None = None) -> int:
    argv = list(sys.argv[1:] if argv is None else argv)
    if sys.stdout is None:  # started with standard output closed (`>&-`): nothing could be reported
        sys.stderr.write("osmodose: standard output is closed: nothing was done\n")
        return BAD_INPUT
    args = _parse_quietly(argv)
    try:
        handler = getattr(args, "handler", None)
        if handler is None:
            return _run_app(args)
        status = int(handler(args))
        sys.stdout.flush()  # a full disk is reported now, not by the interpreter at exit
        return status
    except OsmodoseError as error:
        sys.stderr.write(f"osmodose: {escape_controls(error)}\n")
        _drop_stdout()
        return BAD_INPUT
    except KeyboardInterrupt:
        sys.stderr.write("osmodose: interrupted\n")
        return 130
    except BrokenPipeError:
        # The reader stopped early (`osmodose formulary show | head`): not an error to
        # report, and Python must not complain again when it flushes stdout at exit.
        _drop_stdout()
        return BROKEN_PIPE
    except OSError as error:
        # Output that cannot be written (`> /dev/full`, a closed descriptor): one line, exit 2.
        reason = error.strerror or type(error).__name__
        text = f"{error.filename}: {reason}" if error.filename else f"the output cannot be written: {reason}"
        sys.stderr.write(f"osmodose: {escape_controls(text)}\n")
        _drop_stdout()
        return BAD_INPUT


def _drop_stdout() -> None:
    """Send whatever is still buffered for stdout to nowhere, so the exit-time flush cannot fail again."""
    try:
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        os.close(devnull)
    except (OSError, ValueError, AttributeError):
        pass


def _run_app(args: argparse.Namespace) -> int:
    try:
        app_module = importlib.import_module("osmodose.app.launch")
    except ModuleNotFoundError as error:
        if error.name and error.name.startswith("osmodose.app"):
            sys.stderr.write("osmodose: the app is not built yet; use a subcommand (osmodose --help)\n")
            return BAD_INPUT
        raise
    return int(app_module.launch(args.formulary, args.episode))
