"""The always-visible line naming the formulary every figure comes from, marked DEMO for the bundled demo."""

from __future__ import annotations

from typing import TYPE_CHECKING

from textual.markup import escape
from textual.widgets import Static

from osmodose.app.widgets.lines import set_content
from osmodose.safe_text import escape_controls

if TYPE_CHECKING:
    from osmodose.formulary.model import Formulary

#: Enough of the SHA-256 to tell two files apart at a glance; the full hash is
#: on the formulary screen and in every saved summary.
SHORT_SHA = 8
DEMO = " DEMO: invented unit, not for patients "


def formulary_line(formulary: Formulary) -> str:
    return escape_controls(f"{formulary.name}  v{formulary.version}  sha256 {formulary.sha256[:SHORT_SHA]}")


class FormularyBar(Static):
    """DEMO (for the bundled demo), then name, version and short SHA-256 of the formulary; or what is loading."""

    def __init__(self, formulary: Formulary | None = None, demo: bool = False, loading: str = "") -> None:
        super().__init__("", id="formulary-bar")
        self.demo = demo
        self.text = ""
        if formulary is not None:
            self.show(formulary, demo)
        else:
            self.show_loading(loading)

    def show(self, formulary: Formulary, demo: bool) -> None:
        self.demo = demo
        self._set(formulary_line(formulary))

    def show_loading(self, what: str) -> None:
        self._set(f"◌ {what}…")

    def _set(self, text: str) -> None:
        self.text = (DEMO.strip() + "  " if self.demo else "") + text
        badge = f"[bold black on $warning]{DEMO}[/] " if self.demo else ""
        set_content(self, badge + escape(text))
