"""`osmodose log init-key|verify|list|show N`: the unit's signing key, and the log read back and proved.

Exit status: 0 the log (or the record shown) is intact, 1 a problem was
found (an altered, missing, damaged, incomplete, unsigned-after-signed or
forged record, a decision that does not follow from its own findings, a
recomputation that differs, a missing --expect record), 2 the log or the key
cannot be read, an input is malformed, or there is no such record.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path
from typing import TYPE_CHECKING

from osmodose.cli.commands import help_of
from osmodose.cli.emit import emit
from osmodose.cli.exit_codes import INVALID, LOG_EPILOG, OK
from osmodose.cli.parsers import Action, Arg, add_actions, described
from osmodose.safe_text import escape_controls

HELP = help_of("log")
LOG_HELP = "the log (default: $OSMODOSE_LOG, else ~/.local/state/osmodose/verifications.jsonl)"
KEY_HELP = "the unit's signing key (default: $OSMODOSE_LOG_KEY, else ~/.config/osmodose/log-signing.key)"

if TYPE_CHECKING:
    from osmodose.verify.log import ChainLink, LogProblem
    from osmodose.verify.log_read import ChainReport
    from osmodose.verify.recheck import Rechecker
    from osmodose.verify.signing import Checker


def register(subparsers: argparse._SubParsersAction) -> None:
    parser = described(subparsers, "log", HELP, LOG_EPILOG)
    add_actions(parser.add_subparsers(title="actions", metavar="ACTION", parser_class=type(parser)), ACTIONS)
    parser.set_defaults(handler=lambda _args: _usage(parser))


def _usage(parser: argparse.ArgumentParser) -> int:
    parser.print_usage(sys.stderr)
    sys.stderr.write("osmodose log: choose an action: init-key, verify, list or show N\n")
    return 2


def _paths(args: argparse.Namespace) -> tuple[Path, Path, Checker | None]:
    from osmodose.verify import log_path  # noqa: PLC0415 (kept out of start-up)
    from osmodose.verify.signing import key_path, load_checker  # noqa: PLC0415

    key = key_path(args.key)
    return log_path(args.log), key, load_checker(key)


def run_init_key(args: argparse.Namespace) -> int:
    from osmodose.verify.signing import init_key, key_path, public_path  # noqa: PLC0415

    signer = init_key(key_path(args.key))
    print(f"made the signing key {signer.path} (readable by you only) and its public half {public_path(signer.path)}")
    print(f"key id {signer.key_id}: every record osmodose verify appends is signed with it")
    print("keep the key out of the log's folder and its backups; give the .pub file to whoever checks the log")
    return OK


def _signature_line(report: ChainReport, key: Path) -> str:
    signed, unsigned = report.signed, report.unsigned
    if not signed:
        if not unsigned:
            return "signatures: no records"
        return (
            f"signatures: none: this log is unsigned ({unsigned} record{'s' if unsigned != 1 else ''} written "
            "before osmodose signed records): the chain shows changes, not who made them"
        )
    if report.checker is None:
        text = f"signatures: {signed} signed records NOT checked: no key at {key} (give --key with the key or KEY.pub)"
    else:
        text = f"signatures: {signed} checked with the unit's key {report.checker.key_id} ({report.checker.path})"
    if unsigned:
        text += f"; {unsigned} older records unsigned"
    return text


def run_verify(args: argparse.Namespace) -> int:
    from osmodose.verify.log import ChainLink  # noqa: PLC0415 (the class itself, not only its type)
    from osmodose.verify.log_read import parse_expect, walk_log  # noqa: PLC0415
    from osmodose.verify.recheck import Rechecker  # noqa: PLC0415

    expect = parse_expect(args.expect)
    path, key, checker = _paths(args)
    rechecker = Rechecker(formularies=args.formulary, recompute=not args.no_recompute)
    broken_appends: list[str] = []
    progress = _Progress(path)

    def judge(item: ChainLink | LogProblem) -> list[LogProblem]:
        progress.step()
        if isinstance(item, ChainLink) and item.entry.appended_to_broken_log:
            broken_appends.append(f"record {item.entry.sequence}: {item.entry.appended_to_broken_log}")
        return rechecker(item)

    report = walk_log(path, checker, expect, each=judge)
    progress.done()
    aside = Path(f"{report.path}.incomplete")
    if aside.exists():
        print(f"note: fragments of interrupted writes were set aside in {aside}")
    if report.intact:
        plural = "s" if report.records != 1 else ""
        text = f"log {report.path}: {report.records} record{plural}, chain intact"
        if report.head is not None:
            text += f"; newest record {report.head.sequence} sha256 {report.head.sha256}"
        print(text)
    else:
        first = report.first_problem
        assert first is not None
        print(f"log {report.path}: chain NOT intact ({report.records} readable records)")
        print(f"first problem: {first.message}")
        if len(report.problems) > 1:
            print("all problems:")
            for problem in report.problems:
                print(f"  line {problem.line}: {problem.message}")
    if report.records:
        for line in _summary_lines(report, key, rechecker, broken_appends):
            print(line)
    return OK if report.intact else INVALID


def _summary_lines(report: ChainReport, key: Path, rechecker: Rechecker, broken_appends: list[str]) -> list[str]:
    lines = [_signature_line(report, key)]
    lines.append(f"decisions: {rechecker.rederived} re-derived from each record's own findings and acceptances")
    if rechecker.recompute:
        text = f"recomputed: {rechecker.recomputed} with the formulary file each names"
        missing = sum(rechecker.not_at_hand.values())
        if missing:
            shas = ", ".join(sha[:12] for sha in rechecker.not_at_hand)
            text += f"; {missing} not recomputed: formulary sha256 {shas} not at hand (add it with --formulary)"
        lines.append(text)
        if rechecker.other_version:
            lines.append(
                f"note: {rechecker.other_version} records made by another osmodose version recompute differently; "
                f"the first: {rechecker.first_other_version}"
            )
    else:
        lines.append("recomputed: none (--no-recompute)")
    if broken_appends:
        lines.append(
            f"note: {len(broken_appends)} record(s) appended past a broken chain (--append-to-broken-log); "
            f"the first, {broken_appends[0]}"
        )
    return lines


class _Progress:
    """A count on stderr while a long log is walked, only when stderr is a terminal."""

    EVERY = 1000

    def __init__(self, path: Path) -> None:
        try:
            long_log = path.stat().st_size > 20_000_000
        except OSError:
            long_log = False
        self.shown = long_log and sys.stderr.isatty()
        self.count = 0

    def step(self) -> None:
        self.count += 1
        if self.shown and self.count % self.EVERY == 0:
            sys.stderr.write(f"\rosmodose: {self.count} records checked")
            sys.stderr.flush()

    def done(self) -> None:
        if self.shown and self.count >= self.EVERY:
            sys.stderr.write("\r\033[K")


def run_list(args: argparse.Namespace) -> int:
    from osmodose.verify.decision import decision_word  # noqa: PLC0415 (kept out of start-up)
    from osmodose.verify.log import ChainLink  # noqa: PLC0415
    from osmodose.verify.log_read import walk_log  # noqa: PLC0415

    path, _key, checker = _paths(args)
    empty = True

    def one(item: ChainLink | LogProblem) -> list[LogProblem]:
        nonlocal empty
        if isinstance(item, ChainLink):
            empty = False
            entry = item.entry
            record, order = entry.record, entry.record.order
            print(
                escape_controls(
                    f"{entry.sequence:>5}  {record.timestamp}  {record.decision.initials:<6}  "
                    f"{decision_word(record.outcome):<31}  {order.agent_id} {order.volume_ml:g} mL  "
                    f"sha256 {item.sha256[:12]}" + ("" if item.hash_ok else "  ALTERED")
                )
            )
        return []

    report = walk_log(path, checker, each=one)
    if empty:
        print(escape_controls(f"log {report.path}: no records"))
    for problem in report.problems:
        sys.stderr.write(escape_controls(f"osmodose: log {report.path}:{problem.line}: {problem.message}") + "\n")
    return INVALID if report.problems else OK


def run_show(args: argparse.Namespace) -> int:
    from osmodose.errors import LogError  # noqa: PLC0415
    from osmodose.verify.log_read import find_record, signature_problem  # noqa: PLC0415
    from osmodose.verify.recheck import rederive  # noqa: PLC0415

    path, _key, checker = _paths(args)
    found, last = find_record(path, args.number)
    if found is None:
        known = f"1 to {last}" if last else "none: the log is empty"
        raise LogError(path, f"has no record {args.number} (records: {known})")
    entry = found.entry
    signature = signature_problem(found, checker)
    wrong = rederive(entry.record)
    signature_ok = None if found.signature is None or checker is None else signature is None
    document = entry.to_json(
        found.sha256, hash_ok=found.hash_ok, signature_ok=signature_ok, decision_follows=wrong is None
    )
    lines = [f"record {entry.sequence} of log {path}", f"sha256 {found.sha256}   previous {entry.previous_sha256}"]
    if not found.hash_ok:
        lines.append("ALTERED: this record no longer matches its SHA-256; it was changed after it was saved")
    if signature is not None:
        lines.append(f"SIGNATURE: {signature.message}")
    elif found.signature is None:
        lines.append("unsigned (written before osmodose signed records)")
    elif checker is None:
        lines.append(f"signed by key {entry.signed_by}; not checked (no key at hand: --key)")
    else:
        lines.append(f"signed by the unit's key {entry.signed_by}: signature checked")
    if wrong is not None:
        lines.append(f"DECISION DOES NOT FOLLOW: {wrong}")
    if entry.appended_to_broken_log:
        lines.append(f"appended past a broken chain: {entry.appended_to_broken_log}")
    emit(document, lambda: "\n".join([*lines, "", entry.record.render_text()]), args.json)
    return OK if found.hash_ok and signature is None and wrong is None else INVALID


#: Where the log and the key are, for every action that reads the log.
_LOG_OPTIONS = (
    Arg("--log", metavar="PATH", default=None, help=LOG_HELP),
    Arg("--key", metavar="PATH", default=None, help=KEY_HELP + "; its .pub file is enough to check"),
)

ACTIONS = (
    Action(
        "init-key",
        "make the unit's key that signs every record (0600, outside the log's folder)",
        run_init_key,
        (Arg("--key", metavar="PATH", default=None, help=KEY_HELP),),
        description="Make the unit's Ed25519 key that signs each verification record, and its public half "
        "(KEY.pub, enough to check a log). An existing key is never replaced. Without it, the first verification "
        "makes one.",
        epilog=LOG_EPILOG,
    ),
    Action(
        "verify",
        "prove the chain, the signatures and each decision, or name the first problem",
        run_verify,
        (
            *_LOG_OPTIONS,
            Arg(
                "--expect",
                metavar="SHA256",
                default=None,
                help="a record's SHA-256 noted outside the log (or its first 12+ hex characters) that must still be "
                "there",
            ),
            Arg(
                "--formulary",
                metavar="FILE",
                action="append",
                default=[],
                help="a formulary file a record may name by SHA-256 (repeatable), to recompute its check",
            ),
            Arg("--no-recompute", action="store_true", help="do not recompute the checks (faster)"),
        ),
        description="Walk the log once: every SHA-256 link and signature, each record's decision re-derived from "
        "its own findings and acceptances, and each check recomputed where its formulary file is at hand.",
        epilog=LOG_EPILOG,
    ),
    Action(
        "list",
        "one line per record (exit 1 when records are missing or damaged)",
        run_list,
        _LOG_OPTIONS,
        epilog=LOG_EPILOG,
    ),
    Action(
        "show",
        "one record in full",
        run_show,
        (
            *_LOG_OPTIONS,
            Arg("number", type=int, metavar="N", help="the record's number (as listed)"),
            Arg("--json", action="store_true", help="print the log entry as JSON"),
        ),
        epilog=LOG_EPILOG,
    ),
)
