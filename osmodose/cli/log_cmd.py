"""`osmodose log verify|list|show N`: read the verification log back and prove its chain.

Exit status: 0 the log (or the record shown) is intact, 1 a problem was
found (an altered, missing, damaged or incomplete record), 2 the log cannot
be read or has no such record.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path
from typing import TYPE_CHECKING

from osmodose.cli.emit import emit
from osmodose.cli.exit_codes import INVALID, LOG_EPILOG, OK

HELP = "read the verification log back: verify its chain, list its records, show one"

if TYPE_CHECKING:
    from osmodose.verify.log import LogReadout


def register(subparsers: argparse._SubParsersAction) -> None:
    parser = subparsers.add_parser("log", help=HELP, description=HELP + ".", epilog=LOG_EPILOG)
    common = argparse.ArgumentParser(add_help=False)
    common.add_argument(
        "--log",
        metavar="PATH",
        default=None,
        help="the log (default: $OSMODOSE_LOG, else ~/.local/state/osmodose/verifications.jsonl)",
    )
    actions = parser.add_subparsers(title="actions", metavar="ACTION", parser_class=type(parser))
    check = actions.add_parser(
        "verify",
        parents=[common],
        help="prove the chain unbroken, or name the first altered or missing record",
        epilog=LOG_EPILOG,
    )
    check.add_argument(
        "--expect", metavar="SHA256", default=None, help="a record's SHA-256 noted earlier that must still be there"
    )
    check.set_defaults(handler=run_verify)
    listing = actions.add_parser("list", parents=[common], help="one line per record", epilog=LOG_EPILOG)
    listing.set_defaults(handler=run_list)
    show = actions.add_parser("show", parents=[common], help="one record in full", epilog=LOG_EPILOG)
    show.add_argument("number", type=int, metavar="N", help="the record's number (as listed)")
    show.add_argument("--json", action="store_true", help="print the log entry as JSON")
    show.set_defaults(handler=run_show)
    parser.set_defaults(handler=lambda _args: _usage(parser))


def _usage(parser: argparse.ArgumentParser) -> int:
    parser.print_usage(sys.stderr)
    sys.stderr.write("osmodose log: choose an action: verify, list or show N\n")
    return 2


def _readout(args: argparse.Namespace) -> LogReadout:
    from osmodose.verify import log_path, read_log  # noqa: PLC0415 (kept out of start-up)

    return read_log(log_path(args.log))


def run_verify(args: argparse.Namespace) -> int:
    from osmodose.verify import verify_chain  # noqa: PLC0415 (kept out of start-up)

    readout = _readout(args)
    report = verify_chain(readout, args.expect)
    aside = Path(f"{report.path}.incomplete")
    if aside.exists():
        print(f"note: fragments of interrupted writes were set aside in {aside}")
    if report.intact:
        text = f"log {report.path}: {report.records} record{'s' if report.records != 1 else ''}, chain intact"
        if report.head is not None:
            text += f"; newest record {report.head.entry.sequence} sha256 {report.head.sha256}"
        print(text)
        return OK
    first = report.first_problem
    assert first is not None
    print(f"log {report.path}: chain NOT intact ({report.records} readable records)")
    print(f"first problem: {first.message}")
    if len(report.problems) > 1:
        print("all problems:")
        for problem in report.problems:
            print(f"  line {problem.line}: {problem.message}")
    return INVALID


def run_list(args: argparse.Namespace) -> int:
    from osmodose.verify.decision import decision_word  # noqa: PLC0415 (kept out of start-up)

    readout = _readout(args)
    if not readout.entries:
        print(f"log {readout.path}: no records")
    for item in readout.entries:
        record = item.entry.record
        order = record.order
        print(
            f"{item.entry.sequence:>5}  {record.timestamp}  {record.decision.initials:<6}  "
            f"{decision_word(record.outcome):<31}  {order.agent_id} {order.volume_ml:g} mL  sha256 {item.sha256[:12]}"
            + ("" if item.hash_ok else "  ALTERED")
        )
    for problem in readout.problems:
        sys.stderr.write(f"osmodose: log {readout.path}:{problem.line}: {problem.message}\n")
    altered = any(not item.hash_ok for item in readout.entries)
    return INVALID if readout.problems or altered else OK


def run_show(args: argparse.Namespace) -> int:
    from osmodose.errors import LogError  # noqa: PLC0415 (kept out of start-up)

    readout = _readout(args)
    item = readout.by_sequence(args.number)
    if item is None:
        known = f"1 to {readout.entries[-1].entry.sequence}" if readout.entries else "none: the log is empty"
        raise LogError(readout.path, f"has no record {args.number} (records: {known})")
    emit(item.to_json, lambda: item.render_text(readout.path), args.json)
    return OK if item.hash_ok else INVALID
