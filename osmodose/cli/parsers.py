"""Parsers declared as data: a command's parser from its help, and a command's actions from a table.

Every command and action is described by its one-line help made a sentence
(plus anything more it has to say), so `described` builds that parser once.
A command with actions (`formulary validate|show|...`, `log init-key|verify|...`)
lists them as `Action` rows, each with its `Arg`s, and `add_actions` adds
them in the table's order: the order `--help` shows.
"""

from __future__ import annotations

import argparse
from collections.abc import Callable, Iterable
from typing import Any, NamedTuple


def described(
    subparsers: argparse._SubParsersAction, name: str, help: str, epilog: str | None, more: str = ""
) -> argparse.ArgumentParser:
    """The parser of `name`, its description the one-line `help` as a sentence and then `more`."""
    return subparsers.add_parser(name, help=help, description=f"{help}.{more}", epilog=epilog)


class Arg:
    """One argument as data: the names and keywords `ArgumentParser.add_argument` takes."""

    def __init__(self, *names: str, **options: Any) -> None:
        self.names = names
        self.options = options

    def add_to(self, parser: argparse.ArgumentParser) -> None:
        parser.add_argument(*self.names, **self.options)


class Action(NamedTuple):
    """One action of a command: its word, one-line help, handler and arguments (in `--help`'s order)."""

    name: str
    help: str
    handler: Callable[[argparse.Namespace], int]
    args: tuple[Arg, ...] = ()
    description: str | None = None
    epilog: str | None = None


def add_actions(actions: argparse._SubParsersAction, table: Iterable[Action]) -> None:
    """Add each action of `table` to a command's `actions`, with its arguments and handler."""
    for action in table:
        parser = actions.add_parser(action.name, help=action.help, description=action.description, epilog=action.epilog)
        for arg in action.args:
            arg.add_to(parser)
        parser.set_defaults(handler=action.handler)
