"""The JSON Schema of the formulary file, for editors that check TOML while it is typed.

Made from the file model itself (`FormularyFile`), so the schema and the
loader can never disagree about which keys exist; descriptions are the
fields' docstrings.  The schema checks the layout and the fixed choices;
units, cross-checks and plausible ranges need `osmodose formulary validate`.
"""

from __future__ import annotations

from typing import Any

from pydantic import BaseModel

from osmodose.formulary import file_model
from osmodose.formulary.field_docs import field_docs
from osmodose.formulary.file_model import FormularyFile

DRAFT = "https://json-schema.org/draft/2020-12/schema"


def formulary_schema() -> dict[str, Any]:
    """The draft 2020-12 JSON Schema of a formulary file."""
    schema = FormularyFile.model_json_schema()
    _describe(schema, FormularyFile)
    for name, part in schema.get("$defs", {}).items():
        _describe(part, getattr(file_model, name))
    return {
        "$schema": DRAFT,
        "title": "osmodose formulary file",
        **{key: value for key, value in schema.items() if key != "title"},
        "$comment": "Units, cross-checks and plausible ranges are checked by `osmodose formulary validate`.",
    }


def _describe(part: dict[str, Any], model: type[BaseModel]) -> None:
    """Give each property of `part` the docstring of its field, where it has no description of its own."""
    docs = field_docs(model)
    for name, field in model.model_fields.items():
        shown = part.get("properties", {}).get(field.alias or name)
        if shown is not None and "description" not in shown and name in docs:
            shown["description"] = docs[name]
            part["properties"][field.alias or name] = dict(sorted(shown.items()))
