"""`osmodose verify`: re-check an order as written, decide, and append the record to the log.

Exit status answers "may this be given as written?": 0 released (with or
without accepted warnings), 3 held (a warning not accepted yet), 4 refused,
2 bad input or a log that cannot be appended to (then nothing is shown as
verified: a verification is only reported once its record is on disk).

A log whose chain is broken is not appended to (exit 2, naming the first
problem) unless --append-to-broken-log is given, and then the new record
says so.  Output that cannot be written after the record was saved (a full
disk, a closed pipe) is reported with the record's number, so a retry does
not verify the same order twice.
"""

from __future__ import annotations

import argparse
import sys

from osmodose.case.fields import WRITTEN_ORDER_KEYS, keys
from osmodose.cli.commands import help_of
from osmodose.cli.emit import emit
from osmodose.cli.exit_codes import BY_STATUS, VERIFY_EPILOG
from osmodose.cli.formulary_arg import add_formulary_option, formulary_from_args
from osmodose.cli.parsers import described
from osmodose.cli.patient_args import add_case_options, add_field_options, case_fields
from osmodose.errors import OutputError

HELP = help_of("verify")


def register(subparsers: argparse._SubParsersAction) -> None:
    more = " Decision support only: verify against local protocol and licensed clinical judgement."
    parser = described(subparsers, "verify", HELP, VERIFY_EPILOG, more)
    add_formulary_option(parser)
    add_case_options(parser, order=False, labs=True)
    add_field_options(
        parser.add_argument_group("order as written"),
        WRITTEN_ORDER_KEYS,
        required=("agent", "volume"),
        help_for={
            "volume": "the volume ordered; bare number = mL",
            "duration": "infusion time as written; bare number = minutes",
            "line": "central or peripheral, as written",
        },
    )
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
    verifier.add_argument(
        "--key",
        metavar="PATH",
        default=None,
        help="the unit's signing key (default: $OSMODOSE_LOG_KEY, else ~/.config/osmodose/log-signing.key; "
        "made on first use)",
    )
    verifier.add_argument(
        "--append-to-broken-log",
        action="store_true",
        help="append even though the log's chain is broken (the record notes the first problem)",
    )
    parser.add_argument(
        "--json",
        action="store_true",
        help="print the saved log entry as JSON (status and decision on top) instead of the record",
    )
    parser.set_defaults(handler=run)


def run(args: argparse.Namespace) -> int:
    from osmodose.case.inputs import parse_check_request  # noqa: PLC0415 (kept out of start-up)
    from osmodose.cli.labs_args import with_labs  # noqa: PLC0415 (kept out of start-up)
    from osmodose.verify import append_record, log_path, parse_acceptance, parse_order, verify_order  # noqa: PLC0415 (kept out of start-up)
    from osmodose.verify.signing import key_path, signer_for_log  # noqa: PLC0415 (kept out of start-up)

    formulary = formulary_from_args(args)
    typed = case_fields(args, keys("patient", "condition", "labs", "urine"))
    fields, data_in = with_labs(args, typed, keys("patient", "labs"))
    request = parse_check_request(fields, data_in=data_in)
    order = parse_order(case_fields(args, WRITTEN_ORDER_KEYS))
    acceptances = [parse_acceptance(text) for text in args.accept]
    record = verify_order(request, order, formulary, acceptances, args.initials)
    path = log_path(args.log)
    signer, made = signer_for_log(key_path(args.key), path)
    entry, digest = append_record(path, record, signer, append_to_broken_log=args.append_to_broken_log)
    try:
        emit(lambda: entry.to_json(digest, log=str(path)), lambda: entry.render_saved(digest, path), args.json)
        if made:
            sys.stderr.write(f"osmodose: made the unit's signing key {signer.path} (key id {signer.key_id})\n")
        sys.stdout.flush()
    except OSError as error:
        raise OutputError(
            f"the verification was saved as record {entry.sequence} in {path} (sha256 {digest}), but it could not "
            f"be printed ({error.strerror or type(error).__name__}): do not verify it again; "
            f"osmodose log show {entry.sequence} prints it"
        ) from None
    return BY_STATUS[record.status]
