"""The always-visible line naming the formulary every figure comes from."""

from __future__ import annotations

from textual.widgets import Static

from osmodose.formulary.model import Formulary
from osmodose.safe_text import escape_controls

#: Enough of the SHA-256 to tell two files apart at a glance; the full hash is
#: on the formulary screen and in every saved summary.
SHORT_SHA = 8


def formulary_line(formulary: Formulary) -> str:
    return escape_controls(f"{formulary.name}  v{formulary.version}  sha256 {formulary.sha256[:SHORT_SHA]}")


class FormularyBar(Static):
    """Name, version and short SHA-256 of the loaded formulary."""

    def __init__(self, formulary: Formulary) -> None:
        super().__init__(formulary_line(formulary), id="formulary-bar", markup=False)
