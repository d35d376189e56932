"""`osmodose audit`: every order of a CSV file through the same engine and rules as `check`."""

from __future__ import annotations

import argparse
import codecs
import os
import sys
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import IO, Any, BinaryIO, TextIO, cast

from osmodose.cli.commands import help_of
from osmodose.cli.emit import emit
from osmodose.cli.exit_codes import AUDIT_EPILOG, INVALID, OK
from osmodose.cli.formulary_arg import add_formulary_option, formulary_from_args
from osmodose.cli.parsers import described
from osmodose.errors import InputError
from osmodose.storage.atomic import DestinationIsALink, atomic_writer

HELP = help_of("audit")


def register(subparsers: argparse._SubParsersAction) -> None:
    parser = described(subparsers, "audit", HELP, AUDIT_EPILOG, " Columns and units: see docs/audit.md.")
    parser.add_argument(
        "orders", metavar="ORDERS.csv", help="the orders file: CSV with a header row, .parquet, or - for standard input"
    )
    add_formulary_option(parser)
    parser.add_argument(
        "--out", metavar="FILE", help="write one result row per order to FILE (.csv or .json) instead of stdout"
    )
    parser.add_argument("--force", action="store_true", help="overwrite the --out file if it exists")
    parser.add_argument(
        "--encoding", metavar="NAME", help="the CSV file's text encoding when it is not UTF-8 (e.g. latin-1, cp1252)"
    )
    parser.add_argument("--summary", action="store_true", help="print counts and dose-per-kg distributions")
    parser.add_argument("--json", action="store_true", help="JSON instead of CSV rows or the text summary")
    parser.add_argument(
        "--progress", action="store_true", help="show a progress bar on stderr even when it is not a terminal"
    )
    parser.set_defaults(handler=run)


def run(args: argparse.Namespace) -> int:
    from osmodose.audit.output import BadRows, CsvResults, JsonResults  # noqa: PLC0415
    from osmodose.audit.reader import open_orders  # noqa: PLC0415
    from osmodose.audit.run import Progress, run_audit  # noqa: PLC0415
    from osmodose.audit.summary import Summary  # noqa: PLC0415

    formulary = formulary_from_args(args)
    encoding = _encoding(args.encoding)
    with open_orders(args.orders, encoding) as orders:  # a bad header stops here, before any output is made
        path = orders.path
        with_order_id = "order-id" in orders.header
        out_path = Path(args.out) if args.out else None
        if out_path is not None:
            _check_out(out_path, None if args.orders == "-" else path, args.out, args.force)
        summary = Summary(formulary, str(path))
        bad = BadRows(sys.stderr, path)
        sinks: list = [summary, bad]
        long_file = args.orders != "-" and path.stat().st_size > 1_000_000
        progress = Progress(sys.stderr) if args.progress or (long_file and sys.stderr.isatty()) else None
        as_json = out_path.suffix.lower() == ".json" if out_path is not None else args.json
        with _results(out_path, args.out, to_stdout=not args.summary, binary=not as_json, force=args.force) as handle:
            if handle is not None:
                if as_json:
                    sinks.append(JsonResults(cast(TextIO, handle), formulary))
                else:
                    sinks.append(CsvResults(cast(BinaryIO, handle), with_order_id))
            run_audit(orders, formulary, sinks, progress=progress)
    if args.summary:
        emit(summary.to_json, summary.render, args.json)
    elif out_path is not None:
        s = summary.to_json()["status"]
        print(
            f"{sum(s.values())} rows: ok {s['ok']}, warn {s['warn']}, refuse {s['refuse']}, "
            f"not audited {s['error']}; results in {out_path}"
        )
    return INVALID if bad.count else OK


def _encoding(name: str | None) -> str | None:
    """The codec of --encoding (None for UTF-8, which is checked as it is read)."""
    if name is None:
        return None
    try:
        codec = codecs.lookup(name).name
    except LookupError:
        raise InputError("encoding", name, "is not an encoding osmodose knows", "e.g. utf-8, latin-1, cp1252") from None
    return None if codec == "utf-8" else codec


def _check_out(out_path: Path, orders: Path | None, written: str, force: bool) -> None:
    """Refuse an --out that would destroy a file: the orders themselves, or any file without --force."""
    if out_path.suffix.lower() not in (".csv", ".json"):
        raise InputError("out", written, "has an extension osmodose cannot write", ".csv or .json")
    if orders is not None and out_path.exists() and os.path.samefile(out_path, orders):
        raise InputError("out", written, "is the orders file: the results would overwrite it", "another file")
    if out_path.exists() and not force:
        raise InputError("out", written, "already exists: choose another file or add --force to overwrite it")


class _TextOut:
    """Bytes written to a text stream that has no binary buffer (standard output replaced by a StringIO)."""

    def __init__(self, stream: TextIO) -> None:
        self.stream = stream

    def write(self, data: bytes | memoryview) -> int:
        return self.stream.write(bytes(data).decode("utf-8"))

    def flush(self) -> None:
        self.stream.flush()


@contextmanager
def _results(
    out_path: Path | None, written: str | None, to_stdout: bool, binary: bool, force: bool = False
) -> Iterator[IO[Any] | _TextOut | None]:
    """Where the result rows go: --out, stdout, or nowhere (a summary alone).

    --out is written through `storage.atomic_writer`: to a new file beside
    it, renamed into place only when the whole audit succeeds, so an orders
    file that turns out unreadable partway (or a full disk) leaves no
    half-written results and an older results file untouched; without
    --force it never replaces a file (not even one that appeared meanwhile),
    and it never writes through a symbolic link.
    """
    if out_path is None:
        if to_stdout and binary:
            sys.stdout.flush()
            out = getattr(sys.stdout, "buffer", None) or _TextOut(sys.stdout)  # a StringIO has no bytes below it
            yield out
            out.flush()
        else:
            yield sys.stdout if to_stdout else None
        return
    try:
        # Text (JSON) keeps its "\n" line ends on every platform; CSV bytes are written as they are.
        with atomic_writer(out_path, overwrite=force, text=not binary, newline="") as handle:
            yield handle
    except FileExistsError:
        raise InputError("out", written, "already exists: choose another file or add --force to overwrite it") from None
    except DestinationIsALink:
        raise InputError("out", written, "is a symbolic link: osmodose never writes through or over one") from None
    except OSError as error:
        raise InputError("out", written, f"cannot be written ({error.strerror})") from None
