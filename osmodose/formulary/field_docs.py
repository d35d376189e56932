"""The docstrings under a file model's fields, read from the source only when a page needs them.

The template (`formulary new`) and the JSON Schema (`formulary schema`) print
each field's docstring as its description.  Pydantic can collect them itself
(`use_attribute_docstrings`), but it does so for every model as the module is
imported: about 10 ms of every `osmodose check`, which never shows them.  So
the file model leaves that off and these two pages ask here: the same
docstrings, cleaned as `inspect.cleandoc` cleans them.
"""

from __future__ import annotations

import ast
import functools
import inspect
import textwrap

from pydantic import BaseModel


@functools.cache
def field_docs(model: type[BaseModel]) -> dict[str, str]:
    """Field name -> the string written just under it, for `model` and the models it derives from."""
    docs: dict[str, str] = {}
    for klass in reversed(model.__mro__):
        if not (isinstance(klass, type) and issubclass(klass, BaseModel)) or klass is BaseModel:
            continue
        try:
            source = textwrap.dedent(inspect.getsource(klass))
        except (OSError, TypeError):  # made at run time (the limits table): its descriptions are explicit
            continue
        body = ast.parse(source).body[0]
        if not isinstance(body, ast.ClassDef):
            continue
        for field, after in zip(body.body, body.body[1:], strict=False):
            if (
                isinstance(field, ast.AnnAssign)
                and isinstance(field.target, ast.Name)
                and isinstance(after, ast.Expr)
                and isinstance(after.value, ast.Constant)
                and isinstance(after.value.value, str)
            ):
                docs[field.target.id] = inspect.cleandoc(after.value.value)
    return docs


def description(model: type[BaseModel], name: str) -> str | None:
    """A field's description: the one declared with it, else its docstring."""
    return model.model_fields[name].description or field_docs(model).get(name)
