"""`osmodose formulary validate|show|diff|new|schema`: tools for the unit that writes the formulary.

Thin: each handler calls one core function in `osmodose.formulary` and
prints its result (registration already loads the core for `check`, so
these imports add nothing to start-up).  Exit statuses: validate 0 valid (warnings allowed), 1 not
valid; diff 0 no changes, 1 changes (the diff(1) convention); 2 for a file
that cannot be read or, for show and diff, cannot be used.
"""

from __future__ import annotations

import argparse
import json
import sys
from collections.abc import Sequence
from dataclasses import asdict
from pathlib import Path

from osmodose.check.results import CAUTION
from osmodose.cli.commands import help_of
from osmodose.cli.exit_codes import INVALID, OK
from osmodose.errors import FormularyError
from osmodose.formulary import demo_formulary_path, load_formulary
from osmodose.formulary.diff import diff_formularies, summary_line
from osmodose.formulary.schema import formulary_schema
from osmodose.formulary.summary import AGENT_COLUMNS, LIMIT_COLUMNS, agent_cells, agent_rows, limit_cells, limit_rows
from osmodose.formulary.template import formulary_template
from osmodose.formulary.validate import validate_formulary

#: The agents table is printed as two tables keyed by id, to fit a terminal.
_FIGURE_COLUMNS = ("id", "concentration", "Na mmol/L", "Na mmol/mL", "mOsm/L", "g/mL", "route")
_STOCK_COLUMNS = ("id", "label", "presentations", "dose limits", "max rate")

HELP = help_of("formulary")


def register(subparsers: argparse._SubParsersAction) -> None:
    parser = subparsers.add_parser("formulary", help=HELP, description=HELP + ".")
    actions = parser.add_subparsers(title="actions", metavar="ACTION", required=True)

    validate = actions.add_parser(
        "validate",
        help="list every problem in a formulary file (exit 0 valid, 1 not valid)",
        description="List every error and warning in a formulary file, each as FILE:LINE: key.path: problem. "
        "Exit 0 when valid (warnings allowed), 1 when not, 2 when the file cannot be read.",
    )
    _file_argument(validate)
    validate.add_argument("--json", action="store_true", help="print one JSON object instead of lines")
    validate.set_defaults(handler=run_validate)

    show = actions.add_parser(
        "show",
        help="the agents with their derived sodium and osmolarity, and the limits in force",
        description="Show each agent with its derived figures (mmol Na/L, mmol Na/mL, mOsm/L, g/mL), route, "
        "presentations and dose limits, and every limit in force with where its value comes from.",
    )
    _file_argument(show)
    show.add_argument("--json", action="store_true", help="print one JSON object instead of tables")
    show.set_defaults(handler=run_show)

    diff = actions.add_parser(
        "diff",
        help="what a new version of a formulary changes (exit 0 none, 1 changes)",
        description="List in plain words what NEW changes from OLD: name and version, settings, limits, agents "
        "added or removed, concentrations, derived sodium and osmolarity, routes, presentations, dose limits. "
        "Exit 0 when nothing changes, 1 when something does, 2 when a file cannot be used.",
    )
    diff.add_argument("old", metavar="OLD", help="the formulary in use now")
    diff.add_argument("new", metavar="NEW", help="the proposed version")
    diff.add_argument("--json", action="store_true", help="print one JSON object instead of lines")
    diff.set_defaults(handler=run_diff)

    new = actions.add_parser(
        "new",
        help="write a commented template for a unit to fill in",
        description="Write a commented formulary template (to standard output unless --out is given).",
    )
    new.add_argument("--out", metavar="FILE", default=None, help="write the template to FILE")
    new.add_argument("--force", action="store_true", help="overwrite FILE if it exists")
    new.set_defaults(handler=run_new)

    schema = actions.add_parser(
        "schema",
        help="print a JSON Schema of the formulary file for editors",
        description="Print the JSON Schema (draft 2020-12) of the formulary file, made from its models.",
    )
    schema.set_defaults(handler=run_schema)


def _file_argument(parser: argparse.ArgumentParser) -> None:
    parser.add_argument(
        "file", metavar="FILE", nargs="?", default=None, help="formulary TOML file (default: the bundled demo)"
    )


def _chosen(file: str | None) -> Path:

    return Path(file) if file else demo_formulary_path()


def run_validate(args: argparse.Namespace) -> int:

    verdict = validate_formulary(_chosen(args.file))
    if not verdict.readable:
        raise verdict.errors[0]
    if args.json:
        print(json.dumps(verdict.to_json(), indent=2))
    else:
        for line in [*verdict.lines(), verdict.summary()]:
            print(line)
    return OK if verdict.valid else INVALID


def run_show(args: argparse.Namespace) -> int:

    formulary = load_formulary(_chosen(args.file))
    agents, limits = agent_rows(formulary), limit_rows(formulary)
    if args.json:
        document = {
            "formulary": {"name": formulary.name, "version": formulary.version, "sha256": formulary.sha256},
            "path": formulary.path,
            "agents": [asdict(row) for row in agents],
            "limits": [asdict(row) for row in limits],
            "caution": CAUTION,
        }
        print(json.dumps(document, indent=2))
        return OK
    print(f'formulary "{formulary.name}" version "{formulary.version}"')
    print(f"file {formulary.path}")
    print(f"sha256 {formulary.sha256}")
    print()
    cells = [agent_cells(row) for row in agents]
    print(f"agents ({len(agents)}): composition derived from the concentration")
    _print_table(AGENT_COLUMNS, cells, _FIGURE_COLUMNS)
    print()
    print("agents: label, stock and order limits")
    _print_table(AGENT_COLUMNS, cells, _STOCK_COLUMNS)
    print()
    print("limits in force")
    _print_table(LIMIT_COLUMNS, [limit_cells(row) for row in limits], LIMIT_COLUMNS)
    print()
    print(CAUTION)
    return OK


def run_diff(args: argparse.Namespace) -> int:

    old, new = load_formulary(args.old), load_formulary(args.new)
    changes = diff_formularies(old, new)
    same_bytes = old.sha256 == new.sha256
    if args.json:
        document = {
            "old": {"path": old.path, "sha256": old.sha256},
            "new": {"path": new.path, "sha256": new.sha256},
            "changes": [{**change.to_json(), "text": change.text} for change in changes],
        }
        print(json.dumps(document, indent=2))
    else:
        print(f'--- {old.path} ("{old.name}" version "{old.version}")')
        print(f'+++ {new.path} ("{new.name}" version "{new.version}")')
        for change in changes:
            print(change.text)
        print(summary_line(changes, same_bytes))
    return INVALID if changes else OK


def run_new(args: argparse.Namespace) -> int:

    text = formulary_template()
    if args.out is None:
        sys.stdout.write(text)
        return OK
    out = Path(args.out)
    if out.exists() and not args.force:
        raise FormularyError(out, "already exists: choose another file or add --force to overwrite it")
    try:
        out.write_text(text, encoding="utf-8")
    except OSError as error:
        raise FormularyError(out, f"cannot be written: {error.strerror or type(error).__name__}") from None
    print(f"wrote {out}: fill it in, then run osmodose formulary validate {out}")
    return OK


def run_schema(args: argparse.Namespace) -> int:

    print(json.dumps(formulary_schema(), indent=2))
    return OK


def _print_table(headings: Sequence[str], rows: Sequence[Sequence[str]], chosen: Sequence[str]) -> None:
    """Print the `chosen` columns, left-aligned, two spaces apart."""
    picks = [headings.index(name) for name in chosen]
    table = [[cells[i] for i in picks] for cells in (headings, *rows)]
    widths = [max(len(line[i]) for line in table) for i in range(len(picks))]
    for line in table:
        print("  ".join(cell.ljust(width) for cell, width in zip(line, widths, strict=True)).rstrip())
