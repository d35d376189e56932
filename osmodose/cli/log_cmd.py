"""`osmodose log verify|list|show N`: read the verification log back and prove its chain.

Exit status: 0 the log (or the record shown) is intact, 1 a problem was
found (an altered, missing, damaged or incomplete record), 2 the log cannot
be read or has no such record.
"""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path

from osmodose.cli.commands import help_of
from osmodose.cli.exit_codes import INVALID, OK

HELP = help_of("log")


def register(subparsers: argparse._SubParsersAction) -> None:
    parser = subparsers.add_parser("log", help=HELP, description=HELP + ".")
    common = argparse.ArgumentParser(add_help=False)
    common.add_argument(
        "--log",
        metavar="PATH",
        default=None,
        help="the log (default: $OSMODOSE_LOG, else ~/.local/state/osmodose/verifications.jsonl)",
    )
    actions = parser.add_subparsers(title="actions", metavar="ACTION", parser_class=type(parser))
    check = actions.add_parser(
        "verify", parents=[common], help="prove the chain unbroken, or name the first altered or missing record"
    )
    check.add_argument(
        "--expect", metavar="SHA256", default=None, help="a record's SHA-256 noted earlier that must still be there"
    )
    check.set_defaults(handler=run_verify)
    listing = actions.add_parser("list", parents=[common], help="one line per record")
    listing.set_defaults(handler=run_list)
    show = actions.add_parser("show", parents=[common], help="one record in full")
    show.add_argument("number", type=int, metavar="N", help="the record's number (as listed)")
    show.add_argument("--json", action="store_true", help="print the log entry as JSON")
    show.set_defaults(handler=run_show)
    parser.set_defaults(handler=lambda _args: _usage(parser))


def _usage(parser: argparse.ArgumentParser) -> int:
    parser.print_usage(sys.stderr)
    sys.stderr.write("osmodose log: choose an action: verify, list or show N\n")
    return 2


def _readout(args: argparse.Namespace):  # type: ignore[no-untyped-def]
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
    readout = _readout(args)
    if not readout.entries:
        print(f"log {readout.path}: no records")
    for item in readout.entries:
        record = item.entry.record
        order = record.order
        print(
            f"{item.entry.sequence:>5}  {record.timestamp}  {record.decision.initials:<6}  "
            f"{record.outcome:<31}  {order.agent_id} {order.volume_ml:g} mL  sha256 {item.sha256[:12]}"
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
    entry = item.entry
    if args.json:
        shown = {
            "sequence": entry.sequence,
            "sha256": item.sha256,
            "previous_sha256": entry.previous_sha256,
            "hash_ok": item.hash_ok,
            "record": entry.record.to_json(),
        }
        print(json.dumps(shown, indent=2))
    else:
        print(f"record {entry.sequence} of log {readout.path}")
        print(f"sha256 {item.sha256}   previous {entry.previous_sha256}")
        if not item.hash_ok:
            print("ALTERED: this record no longer matches its SHA-256; it was changed after it was saved")
        print()
        print(entry.record.render_text(), end="")
    return OK if item.hash_ok else INVALID
