"""`osmodose check`: one patient, one optional order, every figure and finding."""

from __future__ import annotations

import argparse
import json

from osmodose.case.inputs import parse_check_request
from osmodose.check.report import render_text
from osmodose.check.run import run_check
from osmodose.cli.commands import help_of
from osmodose.cli.exit_codes import BY_STATUS
from osmodose.cli.formulary_arg import add_formulary_option, formulary_from_args
from osmodose.cli.patient_args import add_case_options, case_fields

HELP = help_of("check")


def register(subparsers: argparse._SubParsersAction) -> None:
    parser = subparsers.add_parser("check", help=HELP, description=HELP + ".")
    add_formulary_option(parser)
    add_case_options(parser)
    parser.add_argument("--json", action="store_true", help="print one JSON object instead of the report")
    parser.set_defaults(handler=run)


def run(args: argparse.Namespace) -> int:
    formulary = formulary_from_args(args)
    request = parse_check_request(case_fields(args))
    result = run_check(request, formulary)
    if args.json:
        print(json.dumps(result.to_json(), indent=2))
    else:
        print(render_text(result), end="")
    return BY_STATUS[result.status]
