"""A command's parser and its actions, built from their declarations (`cli/parsers.py`).

`formulary` and `log` list their actions as `Action` rows: each row is one action
in `--help`, in the table's order, with its own description, epilog, arguments
and handler.  Every command's description is its one-line help made a sentence.
"""

from __future__ import annotations

import argparse

import pytest

from osmodose.cli import formulary_cmd, log_cmd
from osmodose.cli.commands import COMMANDS
from osmodose.cli.main import build_parser
from osmodose.cli.parsers import Action


def _subparsers(parser: argparse.ArgumentParser) -> dict[str, argparse.ArgumentParser]:
    found = [a for a in parser._actions if isinstance(a, argparse._SubParsersAction)]
    assert len(found) == 1
    return dict(found[0].choices)


@pytest.mark.parametrize("command", COMMANDS, ids=lambda c: c.name)
def test_a_commands_description_is_its_help_made_a_sentence(command) -> None:
    parser = _subparsers(build_parser())[command.name]
    assert parser.description is not None
    assert parser.description.startswith(command.help + ".")


@pytest.mark.parametrize(
    ("word", "table"), [("formulary", formulary_cmd.ACTIONS), ("log", log_cmd.ACTIONS)], ids=["formulary", "log"]
)
def test_each_action_row_is_one_parser_in_the_tables_order(word: str, table: tuple[Action, ...]) -> None:
    actions = _subparsers(_subparsers(build_parser())[word])
    assert list(actions) == [row.name for row in table]
    for row in table:
        parser = actions[row.name]
        assert (parser.description, parser.epilog) == (row.description, row.epilog)
        assert parser.get_default("handler") is row.handler
        declared = [arg.names for arg in row.args]
        assert [tuple(a.option_strings) or (a.dest,) for a in parser._actions[1:]] == declared  # [0] is --help


def test_an_action_reads_the_arguments_its_row_declares() -> None:
    args = build_parser().parse_args(["log", "show", "3", "--json", "--log", "l.jsonl"])
    assert (args.number, args.json, args.log, args.key, args.handler) == (3, True, "l.jsonl", None, log_cmd.run_show)
