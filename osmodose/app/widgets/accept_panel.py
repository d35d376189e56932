"""Accept warnings: a tick box and a reason per open warning, and a plain refusal where none can be accepted."""

from __future__ import annotations

from textual.app import ComposeResult
from textual.containers import Vertical
from textual.widgets import Checkbox, Input, Static

from osmodose.app.verify_view import REASON, refusal_note

REASON_HINT = "reason, 8 characters or more"


class AcceptBox(Checkbox):
    """A tick box whose mark is an X only when ticked, so it reads the same without colour."""

    @property
    def BUTTON_INNER(self) -> str:  # type: ignore[override]  # textual declares a class string; we need it per state
        return "X" if self.value else " "


class AcceptRow(Vertical):
    """One warning: `accept <code>`, the reason beside it, and why the reason is not taken yet."""

    def __init__(self, code: str, ticked: bool, reason: str) -> None:
        super().__init__(id=f"accept-row-{code}", classes="accept-row")
        self.code = code
        self.ticked = ticked
        self.reason = reason
        self.message = ""

    def compose(self) -> ComposeResult:
        yield AcceptBox(f"accept {self.code}", self.ticked, compact=True, id=f"accept-{self.code}")
        yield Input(self.reason, placeholder=REASON_HINT, compact=True, id=f"reason-{self.code}")
        yield Static("", classes="field-message", markup=False)

    def mark(self, message: str, bad: bool) -> None:
        self.set_class(bad, "-bad")
        self.set_class(not bad and bool(message), "-missing")
        if message != self.message:
            self.message = message
            for box in self.query(".field-message").results(Static):
                box.update(message)


class AcceptPanel(Vertical):
    """Rebuilt only when the order's set of warnings and refusals changes, so typing a reason keeps focus."""

    def __init__(self) -> None:
        super().__init__(id="accept", classes="panel")
        self.border_title = "accept warnings"
        self.codes: tuple[tuple[str, ...], tuple[str, ...]] | None = None
        self.marked: tuple[str, str, bool] = ("", "", False)

    async def show(
        self, acceptable: list[str], refusals: list[str], ticks: dict[str, bool], reasons: dict[str, str]
    ) -> None:
        codes = (tuple(acceptable), tuple(refusals))
        if codes == self.codes:
            return
        self.codes = codes
        await self.remove_children()
        widgets: list[Static | AcceptRow] = [
            Static(refusal_note(code), classes="refusal-note", markup=False) for code in refusals
        ]
        widgets += [AcceptRow(code, ticks.get(code, False), reasons.get(code, "")) for code in acceptable]
        if not widgets:
            widgets.append(Static("nothing to accept", classes="accept-none", markup=False))
        await self.mount_all(widgets)
        self.mark(*self.marked)

    def mark(self, key: str, message: str, bad: bool) -> None:
        """Mark the row of the reason `key` names ("reason:<code>"); clear every other row."""
        self.marked = (key, message, bad)
        for row in self.query(AcceptRow):
            if key == REASON + row.code:
                row.mark(message, bad)
            else:
                row.mark("", False)
