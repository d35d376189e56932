"""The fixed choices a user makes, each declared once as a `Literal`, read by one parser with one message.

The values come from the `Literal` itself (`typing.get_args`), so a model's
type, the command line's help, the app's select and the audit's column accept
exactly the same words.  Reading ignores case and surrounding spaces.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Generic, Literal, TypeVar, get_args

from osmodose.errors import InputError

Sex = Literal["female", "male"]
Line = Literal["central", "peripheral"]
TbwMethod = Literal["fraction", "watson"]
DoseMode = Literal["dose", "volume", "target-rise"]
EthanolFactor = Literal["molar", "empirical"]


T = TypeVar("T", bound=str)


@dataclass(frozen=True)
class Choice(Generic[T]):
    """One fixed set of words: what it is called in messages, its values, and how a form shows each."""

    noun: str
    values: tuple[T, ...]
    shown: dict[str, str] = field(default_factory=dict)

    def accepted(self) -> str:
        """The values as a message lists them: "female or male"."""
        return " or ".join(self.values)

    def label(self, value: str) -> str:
        """How a form shows one value (the value itself unless a label is given)."""
        return self.shown.get(value, value)

    def read(self, field_key: str, raw: object) -> T:
        """The value `raw` names, or an InputError naming the field and the accepted values."""
        text = str(raw).strip().lower()
        for value in self.values:
            if value == text:
                return value
        raise InputError(field_key, raw, f"is not a {self.noun} osmodose knows", self.accepted())


SEX: Choice[Sex] = Choice("sex", get_args(Sex))
LINE: Choice[Line] = Choice("line", get_args(Line))
TBW_METHOD: Choice[TbwMethod] = Choice(
    "method", get_args(TbwMethod), {"fraction": "fraction of weight", "watson": "Watson"}
)
DOSE_MODE: Choice[DoseMode] = Choice("dose style", get_args(DoseMode), {"target-rise": "target Na change"})
