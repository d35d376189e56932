"""`osmodose verify`: re-check an order as written, decide, and append the record to the log.

Exit status answers "may this be given as written?": 0 released (with or
without accepted warnings), 3 held (a warning not accepted yet), 4 refused,
2 bad input or a log that cannot be appended to (then nothing is shown as
verified: a verification is only reported once its record is on disk).
"""

from __future__ import annotations

import argparse
import json

from osmodose.cli.commands import help_of
from osmodose.cli.exit_codes import OK, REFUSE, WARN
from osmodose.cli.formulary_arg import add_formulary_option, formulary_from_args
from osmodose.cli.patient_args import add_case_options, case_fields

HELP = help_of("verify")

BY_OUTCOME = {
    "released": OK,
    "released-with-accepted-warnings": OK,
    "held": WARN,
    "refused": REFUSE,
}

#: option -> help, for the order as the prescriber wrote it.
ORDER_AS_WRITTEN: tuple[tuple[str, str, bool], ...] = (
    ("--agent", "agent id from the formulary", True),
    ("--volume", "the volume ordered; bare number = mL", True),
    ("--duration", "infusion time as written; bare number = minutes", False),
    ("--rate", "rate as written; bare number = mL/h (2mL/min accepted)", False),
    ("--line", "central or peripheral, as written", False),
    ("--stated-dose", "the prescriber's stated dose: per kg (1g/kg) or absolute (70g, 120mmol)", False),
    ("--stated-sodium", "the serum sodium the prescriber expects after it; bare number = mmol/L", False),
)


def register(subparsers: argparse._SubParsersAction) -> None:
    parser = subparsers.add_parser(
        "verify",
        help=HELP,
        description=HELP + ". Decision support only: verify against local protocol and licensed clinical judgement.",
    )
    add_formulary_option(parser)
    add_case_options(parser, order=False)
    group = parser.add_argument_group("order as written")
    for option, text, required in ORDER_AS_WRITTEN:
        group.add_argument(option, required=required, help=text, metavar="VALUE")
    verifier = parser.add_argument_group("verifier")
    verifier.add_argument(
        "--accept",
        action="append",
        default=[],
        metavar="CODE=REASON",
        help="accept one warning with a written reason (repeatable); a refuse cannot be accepted",
    )
    verifier.add_argument("--initials", required=True, metavar="XX", help="the verifier's initials")
    verifier.add_argument(
        "--log",
        metavar="PATH",
        default=None,
        help="the log to append to (default: $OSMODOSE_LOG, else ~/.local/state/osmodose/verifications.jsonl)",
    )
    parser.add_argument("--json", action="store_true", help="print the saved log entry as JSON instead of the record")
    parser.set_defaults(handler=run)


def run(args: argparse.Namespace) -> int:
    from osmodose.case.inputs import parse_check_request  # noqa: PLC0415 (kept out of start-up)
    from osmodose.verify import append_record, log_path, parse_acceptance, parse_order, verify_order  # noqa: PLC0415 (kept out of start-up)
    from osmodose.verify.order import ORDER_FIELDS  # noqa: PLC0415 (kept out of start-up)

    formulary = formulary_from_args(args)
    patient = {k: v for k, v in case_fields(args).items() if k not in ORDER_FIELDS}
    request = parse_check_request(patient)
    order = parse_order({name: getattr(args, name.replace("-", "_")) for name in ORDER_FIELDS})
    acceptances = [parse_acceptance(text) for text in args.accept]
    record = verify_order(request, order, formulary, acceptances, args.initials)
    path = log_path(args.log)
    entry, digest = append_record(path, record)
    if args.json:
        shown = {
            "log": str(path),
            "sequence": entry.sequence,
            "sha256": digest,
            "previous_sha256": entry.previous_sha256,
            "record": record.to_json(),
        }
        print(json.dumps(shown, indent=2))
    else:
        print(record.render_text(), end="")
        print(f"saved as record {entry.sequence} in {path}")
        print(f"record sha256 {digest} (note it in the chart: osmodose log verify --expect checks it)")
    return BY_OUTCOME[record.outcome]
