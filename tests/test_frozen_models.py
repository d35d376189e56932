"""Requests, results and the loaded formulary cannot be changed once made: every model is `Frozen`.

The models take their configuration from one base (`osmodose.frozen.Frozen`) instead of a
`model_config` each; these tests prove the base still freezes every one of them, and that
the models that asked for their field descriptions still have them.
"""

from __future__ import annotations

import importlib
import inspect

import pytest
from pydantic import BaseModel, ValidationError

from osmodose.case.inputs import DoseRequest
from osmodose.check.results import FormularyRef
from osmodose.formulary import demo_formulary_path, load_formulary
from osmodose.formulary.model import FormularyIdentity
from osmodose.frozen import Frozen
from osmodose.verify.decision import Decision
from osmodose.verify.order import Order

MODULES = (
    "osmodose.case.inputs",
    "osmodose.case.provenance",
    "osmodose.check.results",
    "osmodose.formulary.limits",
    "osmodose.formulary.model",
    "osmodose.verify.decision",
    "osmodose.verify.order",
)


def _models() -> list[type[BaseModel]]:
    found: list[type[BaseModel]] = []
    for name in MODULES:
        module = importlib.import_module(name)
        found += [
            value
            for value in vars(module).values()
            if inspect.isclass(value) and issubclass(value, BaseModel) and value.__module__ == name
        ]
    return found


@pytest.mark.parametrize("model", _models(), ids=lambda m: f"{m.__module__}.{m.__name__}")
def test_every_model_is_frozen(model: type[BaseModel]) -> None:
    assert model.model_config.get("frozen") is True


def test_an_instance_cannot_be_changed() -> None:
    formulary = load_formulary(demo_formulary_path())
    with pytest.raises(ValidationError):
        formulary.name = "changed"  # type: ignore[misc]


@pytest.mark.parametrize("module", ["osmodose.verify.decision", "osmodose.verify.order"])
def test_the_verification_models_keep_their_field_descriptions(module: str) -> None:
    models = [m for m in _models() if m.__module__ == module]
    assert models
    assert all(issubclass(m, Frozen) and m.model_config.get("use_attribute_docstrings") is True for m in models)


def test_a_field_docstring_is_its_description_where_asked_for() -> None:
    assert Order.model_fields["agent_id"].description == "Id of the agent in the formulary."
    assert Decision.model_fields["refusals"].description == (
        "Codes of refusals (the order is refused while any remain)."
    )
    assert DoseRequest.model_fields["agent_id"].description is None  # not asked for: no start-up cost


def test_a_result_names_its_formulary_by_the_formulary_s_own_identity() -> None:
    formulary = load_formulary(demo_formulary_path())
    reference = FormularyRef.of(formulary)
    assert reference.model_dump() == {name: getattr(formulary, name) for name in FormularyIdentity.model_fields}
    assert list(reference.model_dump()) == ["name", "version", "sha256", "path", "demo"]
    assert reference.line() == f"formulary: {formulary.name} v{formulary.version} sha256 {formulary.sha256}"
