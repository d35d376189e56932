"""`osmodose formulary validate|show|diff|new|schema`: tools for the unit that writes the formulary.

Thin: each handler calls one core function in `osmodose.formulary` and
prints its result (registration already loads the core for `check`, so
these imports add nothing to start-up).  Exit statuses: validate 0 valid (warnings allowed), 1 not
valid; diff 0 no changes, 1 changes (the diff(1) convention); 2 for a file
that cannot be read or, for show and diff, cannot be used.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from osmodose.check.results import CAUTION
from osmodose.cli.commands import help_of
from osmodose.cli.emit import emit
from osmodose.cli.exit_codes import DIFF_EPILOG, DONE_EPILOG, INVALID, OK, VALIDATE_EPILOG
from osmodose.cli.parsers import Action, Arg, add_actions, described
from osmodose.errors import FormularyError
from osmodose.formulary import demo_formulary_path, load_formulary
from osmodose.formulary.diff import diff_formularies, diff_json, render_diff
from osmodose.formulary.schema import formulary_schema
from osmodose.formulary.summary import render_show, show_json
from osmodose.formulary.template import formulary_template
from osmodose.formulary.validate import validate_formulary
from osmodose.safe_text import escape_controls
from osmodose.storage.atomic import DestinationIsALink, atomic_write

HELP = help_of("formulary")


def register(subparsers: argparse._SubParsersAction) -> None:
    parser = described(subparsers, "formulary", HELP, DONE_EPILOG)
    add_actions(parser.add_subparsers(title="actions", metavar="ACTION", required=True), ACTIONS)


def _chosen(file: str | None) -> Path:

    return Path(file) if file else demo_formulary_path()


def run_validate(args: argparse.Namespace) -> int:
    verdict = validate_formulary(_chosen(args.file))
    if not verdict.readable:
        raise verdict.errors[0]
    emit(verdict.to_json, lambda: "\n".join([*verdict.lines(), verdict.summary()]), args.json)
    return OK if verdict.valid else INVALID


def run_show(args: argparse.Namespace) -> int:
    formulary = load_formulary(_chosen(args.file))
    emit(lambda: show_json(formulary, CAUTION), lambda: render_show(formulary, CAUTION), args.json)
    return OK


def run_diff(args: argparse.Namespace) -> int:
    old, new = load_formulary(args.old), load_formulary(args.new)
    changes = diff_formularies(old, new)
    emit(lambda: diff_json(old, new, changes), lambda: render_diff(old, new, changes), args.json)
    return INVALID if changes else OK


def run_new(args: argparse.Namespace) -> int:
    text = formulary_template()
    if args.out is None:
        sys.stdout.write(text)
        return OK
    out = Path(args.out)
    try:
        atomic_write(out, text, overwrite=args.force)
    except FileExistsError:
        raise FormularyError(out, "already exists: choose another file or add --force to overwrite it") from None
    except DestinationIsALink:
        raise FormularyError(out, "is a symbolic link: osmodose never writes through or over one") from None
    except OSError as error:
        raise FormularyError(out, f"cannot be written: {error.strerror or type(error).__name__}") from None
    print(escape_controls(f"wrote {out}: fill it in, then run osmodose formulary validate {out}"))
    return OK


def run_schema(args: argparse.Namespace) -> int:
    emit(formulary_schema, "", True)
    return OK


_FILE = Arg("file", metavar="FILE", nargs="?", default=None, help="formulary TOML file (default: the bundled demo)")


def _json(instead_of: str) -> Arg:
    return Arg("--json", action="store_true", help=f"print one JSON object instead of {instead_of}")


ACTIONS = (
    Action(
        "validate",
        "list every problem in a formulary file (exit 0 valid, 1 not valid)",
        run_validate,
        (_FILE, _json("lines")),
        description="List every error and warning in a formulary file, each as FILE:LINE: key.path: problem. "
        "Exit 0 when valid (warnings allowed), 1 when not, 2 when the file cannot be read.",
        epilog=VALIDATE_EPILOG,
    ),
    Action(
        "show",
        "the agents with their derived sodium and osmolarity, and the limits in force",
        run_show,
        (_FILE, _json("tables")),
        description="Show each agent with its derived figures (mmol Na/L, mmol Na/mL, mOsm/L, g/mL), route, "
        "presentations and dose limits, and every limit in force with where its value comes from.",
        epilog=DONE_EPILOG,
    ),
    Action(
        "diff",
        "what a new version of a formulary changes (exit 0 none, 1 changes)",
        run_diff,
        (
            Arg("old", metavar="OLD", help="the formulary in use now"),
            Arg("new", metavar="NEW", help="the proposed version"),
            _json("lines"),
        ),
        description="List in plain words what NEW changes from OLD: name and version, settings, limits, agents "
        "added or removed, concentrations, derived sodium and osmolarity, routes, presentations, dose limits. "
        "Exit 0 when nothing changes, 1 when something does, 2 when a file cannot be used.",
        epilog=DIFF_EPILOG,
    ),
    Action(
        "new",
        "write a commented template for a unit to fill in",
        run_new,
        (
            Arg("--out", metavar="FILE", default=None, help="write the template to FILE"),
            Arg("--force", action="store_true", help="overwrite FILE if it exists"),
        ),
        description="Write a commented formulary template (to standard output unless --out is given).",
        epilog=DONE_EPILOG,
    ),
    Action(
        "schema",
        "print a JSON Schema of the formulary file for editors",
        run_schema,
        description="Print the JSON Schema (draft 2020-12) of the formulary file, made from its models.",
        epilog=DONE_EPILOG,
    ),
)
