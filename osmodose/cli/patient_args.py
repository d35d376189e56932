"""Options for a patient, labs and an order, shared by every subcommand that takes them."""

from __future__ import annotations

import argparse

#: option name -> (dest, help)
PATIENT_OPTIONS: tuple[tuple[str, str], ...] = (
    ("--weight", "body weight; bare number = kg (e.g. 70, 176lb)"),
    ("--age", "age; bare number = years"),
    ("--sex", "female or male"),
    ("--height", "height; bare number = cm (needed for --tbw-method watson)"),
    ("--tbw-method", "fraction (Adrogue-Madias, default) or watson"),
)
LAB_OPTIONS: tuple[tuple[str, str], ...] = (
    ("--sodium", "serum sodium; bare number = mmol/L"),
    ("--potassium", "serum potassium; bare number = mmol/L"),
    ("--glucose", "serum glucose; bare number = mmol/L (126mg/dL accepted)"),
    ("--urea", "serum urea; bare number = mmol/L"),
    ("--bun", "blood urea nitrogen instead of urea; bare number = mg/dL"),
    ("--ethanol", "serum ethanol; bare number = mmol/L (mg/dL accepted)"),
    ("--osmolality", "measured serum osmolality; bare number = mOsm/kg"),
)
ORDER_OPTIONS: tuple[tuple[str, str], ...] = (
    ("--agent", "agent id from the formulary"),
    ("--dose", "dose per kg (1g/kg, 5mL/kg) or absolute (50g, 120mmol)"),
    ("--volume", "volume; bare number = mL"),
    ("--target-rise", "the sodium change wanted; bare number = mmol/L"),
    ("--duration", "infusion time; bare number = minutes (e.g. 20, 2h)"),
    ("--line", "central or peripheral; without it no line check"),
)
REQUIRED = {"--weight", "--age", "--sex", "--sodium"}


def add_case_options(parser: argparse.ArgumentParser, order: bool = True) -> None:
    """Add the patient, lab and (optionally) order options."""
    groups = [("patient", PATIENT_OPTIONS), ("labs", LAB_OPTIONS)]
    if order:
        groups.append(("order", ORDER_OPTIONS))
    for title, options in groups:
        group = parser.add_argument_group(title)
        for option, text in options:
            group.add_argument(option, required=option in REQUIRED, help=text, metavar="VALUE")


def case_fields(args: argparse.Namespace) -> dict[str, object]:
    """The typed text of every case option, keyed as `parse_check_request` expects."""
    fields: dict[str, object] = {}
    for option, _ in PATIENT_OPTIONS + LAB_OPTIONS + ORDER_OPTIONS:
        dest = option[2:].replace("-", "_")
        if hasattr(args, dest):
            fields[option[2:]] = getattr(args, dest)
    return fields
