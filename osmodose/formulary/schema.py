"""The JSON Schema of the formulary file, for editors that check TOML while it is typed.

Made from the file model itself (`FormularyFile`), so the schema and the
loader can never disagree about which keys exist; descriptions are the
fields' docstrings.  The schema checks the layout and the fixed choices;
units, cross-checks and plausible ranges need `osmodose formulary validate`.
"""

from __future__ import annotations

from typing import Any

from osmodose.formulary.file_model import FormularyFile

DRAFT = "https://json-schema.org/draft/2020-12/schema"


def formulary_schema() -> dict[str, Any]:
    """The draft 2020-12 JSON Schema of a formulary file."""
    schema = FormularyFile.model_json_schema()
    return {
        "$schema": DRAFT,
        "title": "osmodose formulary file",
        **{key: value for key, value in schema.items() if key != "title"},
        "$comment": "Units, cross-checks and plausible ranges are checked by `osmodose formulary validate`.",
    }
