"""`osmodose check`: one patient, one optional order, every figure and finding."""

from __future__ import annotations

import argparse

from osmodose.case.fields import keys
from osmodose.case.inputs import CheckRequest, parse_check_request
from osmodose.check.report import render_text
from osmodose.check.results import CheckResult
from osmodose.check.run import run_check
from osmodose.cli.commands import help_of
from osmodose.cli.emit import emit
from osmodose.cli.exit_codes import BY_STATUS, STATUS_EPILOG
from osmodose.cli.formulary_arg import add_formulary_option, formulary_from_args
from osmodose.cli.labs_args import with_labs
from osmodose.cli.parsers import described
from osmodose.cli.patient_args import add_case_options, case_fields
from osmodose.formulary.model import Formulary

HELP = help_of("check")


def register(subparsers: argparse._SubParsersAction) -> None:
    parser = described(subparsers, "check", HELP, STATUS_EPILOG)
    add_formulary_option(parser)
    add_case_options(parser, labs=True)
    parser.add_argument(
        "--episode",
        metavar="FILE",
        default=None,
        help="a patient's episode file (osmodose course): show the 24 h rise already used, judge the order by the "
        "course's rise limits, and take raised ICP from its readings",
    )
    parser.add_argument("--json", action="store_true", help="print one JSON object instead of the report")
    parser.set_defaults(handler=run)


def run(args: argparse.Namespace) -> int:
    formulary = formulary_from_args(args)
    fields, data_in = with_labs(args, case_fields(args), keys("patient", "labs"))
    request = parse_check_request(fields, data_in=data_in)
    episode = args.episode
    result = run_check(request, formulary) if episode is None else _with_episode(request, formulary, episode, args.at)
    emit(result.to_json, lambda: render_text(result), args.json)
    return BY_STATUS[result.status]


def _with_episode(request: CheckRequest, formulary: Formulary, path: str, at: str | None) -> CheckResult:
    """The check as at `--at` (default now) with the episode at `path` open beside it (course modules load here)."""
    from osmodose.case.times import parse_time  # noqa: PLC0415 (kept out of start-up)
    from osmodose.course.plan import check_with_course  # noqa: PLC0415 (kept out of start-up)
    from osmodose.course.store import load_episode  # noqa: PLC0415 (kept out of start-up)

    return check_with_course(request, formulary, load_episode(path), parse_time(at or "now", "at"))
