"""The --formulary option: the unit's file, or the bundled demo when not given."""

from __future__ import annotations

import argparse

from osmodose.formulary import Formulary, demo_formulary_path, load_formulary


def add_formulary_option(parser: argparse.ArgumentParser) -> None:
    # SUPPRESS, not None: a subcommand's default would overwrite the file given before
    # the subcommand (`osmodose --formulary F check ...`) and silently use the demo.
    parser.add_argument(
        "--formulary",
        metavar="FILE",
        default=argparse.SUPPRESS,
        help="the unit's formulary TOML file (default: the bundled demo formulary)",
    )


def formulary_from_args(args: argparse.Namespace) -> Formulary:
    """Load the chosen formulary; a bad file raises FormularyError, never falls back."""
    return load_formulary(getattr(args, "formulary", None) or demo_formulary_path())
