"""`Frozen`: the base of the models osmodose builds once and never changes (requests, results, formularies).

A request, a result or a loaded formulary is validated when it is made and
read by many hands after: frozen, none of them can change it behind another's
back.  Declared here once instead of a `model_config` in every model.

No `use_attribute_docstrings`: nothing reads most models' field descriptions,
and pydantic extracting them from the source costs `osmodose check` about
10 ms of start-up (the docstrings stay for readers).  A model that wants its
field descriptions asks for them itself:
`class Order(Frozen, use_attribute_docstrings=True)`.
"""

from __future__ import annotations

from pydantic import BaseModel, ConfigDict


class Frozen(BaseModel):
    """A pydantic model whose instances cannot be changed once validated."""

    model_config = ConfigDict(frozen=True)
