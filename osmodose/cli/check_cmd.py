"""`osmodose check`: one patient, one optional order, every figure and finding."""

from __future__ import annotations

import argparse
import json

from osmodose.case.inputs import parse_check_request
from osmodose.check.report import render_text
from osmodose.check.run import run_check
from osmodose.cli.exit_codes import BY_STATUS
from osmodose.cli.formulary_arg import add_formulary_option, formulary_from_args
from osmodose.cli.patient_args import add_case_options, case_fields
from osmodose.safe_text import escape_controls

HELP = "compute osmolality, total body water, a dose and its sodium projection, and check the limits"


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
        print(escape_controls(render_text(result), keep_lines=True), end="")  # names and values from input
    return BY_STATUS[result.status]
