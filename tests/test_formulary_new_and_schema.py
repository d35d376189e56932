"""`osmodose formulary new` (the template) and `osmodose formulary schema` (JSON Schema of the file)."""

from __future__ import annotations

import json
import re
import tomllib
from pathlib import Path

import jsonschema
import pytest

from osmodose.cli.main import main
from osmodose.formulary import demo_formulary_path, load_formulary
from osmodose.formulary.file_model import LimitsTable
from osmodose.formulary.limits import LIMIT_SPECS
from osmodose.formulary.schema import formulary_schema
from osmodose.formulary.template import formulary_template
from osmodose.formulary.validate import validate_formulary
from tests.formulary_files import write


def uncommented(template: str) -> str:
    """The template with every commented-out key and example agent switched on."""
    switch_on = re.compile(r"^# (\[\[agents\]\]|\[\w+\]|[a-z_0-9]+ = )")
    return "\n".join(line[2:] if switch_on.match(line) else line for line in template.splitlines()) + "\n"


def test_new_writes_the_template_to_stdout(capsys: pytest.CaptureFixture[str]) -> None:
    assert main(["formulary", "new"]) == 0
    assert capsys.readouterr().out == formulary_template()


def test_the_template_validates_without_errors_or_warnings(tmp_path: Path) -> None:
    verdict = validate_formulary(write(tmp_path, formulary_template()))
    assert verdict.errors == ()
    assert verdict.warnings == ()


def test_the_template_with_every_example_switched_on_still_validates(tmp_path: Path) -> None:
    path = write(tmp_path, uncommented(formulary_template()))
    formulary = load_formulary(path)
    assert [a.id for a in formulary.agents] == ["nacl-0.9", "nacl-23.4", "mannitol-20", "lactated-ringers"]
    # Every limit written at its default (mannitol_24h_max, without one, at the example 2 g/kg).
    assert formulary.limits.from_file == frozenset(LIMIT_SPECS)
    for name, spec in LIMIT_SPECS.items():
        assert formulary.limits.get(name) == (2.0 if spec.default is None else spec.default)
    assert validate_formulary(path).warnings == ()


def test_the_template_names_every_limit_with_its_source() -> None:
    template = formulary_template()
    for name, spec in LIMIT_SPECS.items():
        assert f"# {name} = " in template
        assert spec.source in template


def test_new_out_writes_a_file_and_refuses_to_overwrite_it(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    out = tmp_path / "ward.toml"
    assert main(["formulary", "new", "--out", str(out)]) == 0
    assert out.read_text() == formulary_template()
    assert capsys.readouterr().out == f"wrote {out}: fill it in, then run osmodose formulary validate {out}\n"
    out.write_text("# the unit's own edits\n")
    assert main(["formulary", "new", "--out", str(out)]) == 2
    assert capsys.readouterr().err == (
        f"osmodose: formulary {out}: already exists: choose another file or add --force to overwrite it\n"
    )
    assert out.read_text() == "# the unit's own edits\n"
    assert main(["formulary", "new", "--out", str(out), "--force"]) == 0
    assert out.read_text() == formulary_template()


def test_new_out_into_a_missing_folder_is_one_line(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    out = tmp_path / "no-such-folder" / "ward.toml"
    assert main(["formulary", "new", "--out", str(out)]) == 2
    assert capsys.readouterr().err == f"osmodose: formulary {out}: cannot be written: No such file or directory\n"


def schema_from_cli(capsys: pytest.CaptureFixture[str]) -> dict:
    assert main(["formulary", "schema"]) == 0
    return json.loads(capsys.readouterr().out)


def test_schema_is_a_valid_draft_2020_12_schema(capsys: pytest.CaptureFixture[str]) -> None:
    schema = schema_from_cli(capsys)
    assert schema == formulary_schema()
    assert schema["$schema"] == "https://json-schema.org/draft/2020-12/schema"
    jsonschema.Draft202012Validator.check_schema(schema)


def test_schema_accepts_the_demo_and_the_template() -> None:
    validator = jsonschema.Draft202012Validator(formulary_schema())
    assert list(validator.iter_errors(tomllib.loads(demo_formulary_path().read_text()))) == []
    assert list(validator.iter_errors(tomllib.loads(uncommented(formulary_template())))) == []


BROKEN = {
    "misspelt limit": (
        lambda d: d["limits"].update(sodium_refuze="160 mmol/L"),
        ["limits"],
        "Additional properties are not allowed ('sodium_refuze' was unexpected)",
    ),
    "route not one of the two": (
        lambda d: d["agents"][1].update(route="centre"),
        ["agents", 1, "route"],
        "'centre' is not one of ['central-only', 'any-line']",
    ),
    "a limit as a bare number": (
        lambda d: d["limits"].update(sodium_refuse=160),
        ["limits", "sodium_refuse"],
        "160 is not valid under any of the given schemas",
    ),
    "no agents": (lambda d: d.pop("agents"), [], "'agents' is a required property"),
    "an id with capitals": (
        lambda d: d["agents"][0].update(id="NaCl"),
        ["agents", 0, "id"],
        "'NaCl' does not match '^[a-z0-9][a-z0-9._-]*$'",
    ),
}


@pytest.mark.parametrize(("breaks", "where", "message"), BROKEN.values(), ids=BROKEN)
def test_schema_rejects_a_broken_file(breaks: object, where: list[object], message: str) -> None:
    data = tomllib.loads(demo_formulary_path().read_text())
    breaks(data)  # type: ignore[operator]
    errors = list(jsonschema.Draft202012Validator(formulary_schema()).iter_errors(data))
    assert [(list(e.absolute_path), e.message) for e in errors] == [(where, message)]


def test_schema_descriptions_are_the_field_docstrings_and_the_limit_specs() -> None:
    schema = formulary_schema()
    limits = schema["$defs"]["LimitsTable"]["properties"]
    assert limits["sodium_refuse"]["description"] == LimitsTable.model_fields["sodium_refuse"].description
    assert limits["sodium_refuse"]["description"] == (
        "Serum sodium, current or projected, above which an order is refused; default 160 mmol/L."
    )
    agent = schema["$defs"]["AgentEntry"]
    assert agent["additionalProperties"] is False
    assert agent["properties"]["route"]["description"].startswith('"central-only" = a central line only')
