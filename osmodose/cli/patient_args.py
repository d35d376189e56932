"""Command-line options made from the field table, shared by every subcommand that takes a case.

Each option is `--KEY` of a field in `osmodose.case.fields`, with its help; the
values are handed on as typed text, keyed as the field table keys them, so the
core reads them exactly as it reads the app's forms and the audit's cells.
"""

from __future__ import annotations

import argparse
from collections.abc import Iterable

from osmodose.case.fields import FIELDS, Group, keys

#: The groups `check` takes, with the titles of their help sections.
CASE_GROUPS: tuple[tuple[Group, str], ...] = (("patient", "patient"), ("labs", "labs"), ("order", "order"))


def add_field_options(
    parser: argparse.ArgumentParser | argparse._ArgumentGroup,
    names: Iterable[str],
    required: Iterable[str] = (),
    help_for: dict[str, str] | None = None,
) -> None:
    """An option per field key in `names`; `required` makes some mandatory, `help_for` rewords some."""
    must = set(required)
    for key in names:
        field = FIELDS[key]
        text = (help_for or {}).get(key, field.help)
        metavar = "|".join(field.choice.values) if field.choice is not None else "VALUE"
        parser.add_argument(field.option, required=key in must, help=text, metavar=metavar)


def add_case_options(parser: argparse.ArgumentParser, order: bool = True, labs: bool = False) -> None:
    """Add the patient, lab and (optionally) order options; required as a check requires them.

    With `labs`, the case may be read from a labs file too (`labs_args`): the
    patient and lab fields are then required only when no file is given.
    """
    unless_labs: list[str] = []
    for group, title in CASE_GROUPS:
        if group == "order" and not order:
            continue
        names = keys(group)
        must = [k for k in names if FIELDS[k].required]
        if labs and group in ("patient", "labs"):
            unless_labs += must
            must = []
        add_field_options(parser.add_argument_group(title), names, must)
    if labs:
        from osmodose.cli.labs_args import add_labs_options  # noqa: PLC0415 (cheap; kept beside its use)

        add_labs_options(parser, unless_labs)


def case_fields(args: argparse.Namespace, names: Iterable[str] | None = None) -> dict[str, object]:
    """The typed text of every field option given to the parser, keyed as the field table keys it."""
    wanted = keys("patient", "labs", "order") if names is None else tuple(names)
    return {key: getattr(args, key.replace("-", "_")) for key in wanted if hasattr(args, key.replace("-", "_"))}
