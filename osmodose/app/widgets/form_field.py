"""One box of the form: a label, a typed field or a choice, and the reason it is marked."""

from __future__ import annotations

from textual.app import ComposeResult
from textual.containers import Horizontal, Vertical
from textual.widgets import Input, Label, Select, Static

from osmodose.app.view import FieldSpec


class FormField(Vertical):
    """Holds one form value; `mark` shows at the field why it is wrong or still needed."""

    def __init__(self, spec: FieldSpec, choices: tuple[tuple[str, str], ...] = ()) -> None:
        super().__init__(id=f"field-{spec.key}", classes="field")
        self.spec = spec
        self.choices = choices or spec.choices
        self.message = ""

    def compose(self) -> ComposeResult:
        with Horizontal(classes="field-row"):
            yield Label(self.spec.label, classes="field-label")
            if self.choices:
                yield Select(
                    self.choices,
                    prompt=self.spec.blank or "choose",
                    allow_blank=bool(self.spec.blank),
                    compact=True,
                    id=f"in-{self.spec.key}",
                )
            else:
                yield Input(placeholder=self.spec.hint, compact=True, id=f"in-{self.spec.key}")
        yield Static("", classes="field-message", markup=False)

    @property
    def control(self) -> Input | Select[str]:
        # query_one is typed to return a Widget; the box holds exactly one Input or Select with this id.
        return self.query_one(f"#in-{self.spec.key}")  # type: ignore[return-value]

    @property
    def value(self) -> str:
        control = self.control
        if isinstance(control, Input):
            return control.value
        return "" if control.is_blank() else str(control.value)

    def set_value(self, text: str) -> None:
        """Put `text` in the box (a value read from a file)."""
        self.control.value = text

    def reset(self) -> None:
        control = self.control
        if isinstance(control, Input):
            control.value = ""
        elif self.spec.blank:
            control.clear()
        else:
            control.value = self.choices[0][1]

    def mark(self, message: str, bad: bool) -> None:
        """Show `message` under the field; `bad` for a wrong value, else a value still needed."""
        self.set_class(bad, "-bad")
        self.set_class(not bad and bool(message), "-missing")
        if message != self.message:
            self.message = message
            self.query_one(".field-message", Static).update(message)
