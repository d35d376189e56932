"""`--labs FILE` and `--at TIME`: the options that read a case's labs (and patient) from an HL7 FHIR file.

With `--labs` the fields a check otherwise requires (weight, age, sex,
sodium) may come from the file, so they are required only without it; the
message for a missing one is argparse's own.  The FHIR reader is imported
only when `--labs` is given.
"""

from __future__ import annotations

import argparse
from collections.abc import Iterable
from typing import TYPE_CHECKING

from osmodose.case.fields import FIELDS

if TYPE_CHECKING:
    from osmodose.case.provenance import DataIn

LABS_HELP = (
    "read labs (and weight, height, age, sex) from an HL7 FHIR R4 JSON file: a Bundle, one Observation, "
    "or NDJSON; matched by LOINC code, converted by UCUM unit, the newest final value of each; a value "
    "typed as an option wins over the file's (docs/data-in.md)"
)
AT_HELP = "the time of the check, for the age of the file's labs: ISO 8601, or now (the default)"


def add_labs_options(parser: argparse.ArgumentParser, required: Iterable[str] = ()) -> None:
    """Add --labs and --at; `required` names the field keys that are required unless --labs is given."""
    group = parser.add_argument_group("labs from a file")
    group.add_argument("--labs", metavar="FILE", default=None, help=LABS_HELP)
    group.add_argument("--at", metavar="TIME", default=None, help=AT_HELP)
    parser.set_defaults(required_unless_labs=(parser, tuple(required)))


def require_unless_labs(args: argparse.Namespace) -> None:
    """argparse's own error for required options missing, when no labs file can give them."""
    parser, names = args.required_unless_labs
    if args.labs:
        return
    missing = [FIELDS[name].option for name in names if getattr(args, name.replace("-", "_"), None) is None]
    if missing:
        parser.error("the following arguments are required: " + ", ".join(missing))


def with_labs(
    args: argparse.Namespace, fields: dict[str, object], keys: Iterable[str]
) -> tuple[dict[str, object], DataIn | None]:
    """`fields` with the labs file's values where none was typed, and their origins (None without --labs)."""
    require_unless_labs(args)
    if not args.labs:
        return fields, None
    from osmodose.case.times import parse_time  # noqa: PLC0415 (only with --labs)
    from osmodose.datain import with_labs_file  # noqa: PLC0415 (the FHIR models load only with --labs)

    at = parse_time(args.at or "now", "at")
    return with_labs_file(fields, args.labs, at, keys)
