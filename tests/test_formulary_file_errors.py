"""Every kind of problem the file model finds in a formulary, in osmodose's own words, word for word.

Each message says what is wrong, what is accepted and gives an example line; none is the
validation library's ("String should match pattern ...", "Input should be a valid list").
The same holds for an episode file (`errors.file_problem`).
"""

from __future__ import annotations

import copy
import datetime
import json
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pytest
from pydantic import ValidationError

from osmodose.course.store import episode_from_data
from osmodose.errors import EpisodeFileError, value_kind
from osmodose.formulary.file_errors import describe, key_path
from osmodose.formulary.file_model import FormularyFile

BASE: dict[str, Any] = {
    "formulary": {"name": "Ward 4", "version": "1"},
    "agents": [
        {"id": "m20", "label": "Mannitol 20 %", "solute": "mannitol", "concentration": "20% w/v", "route": "central"}
    ],
}
#: Phrases of the validation library that must never reach a user.
LIBRARY_WORDS = ("Input should", "String should", "Field required", "Extra inputs", "valid list", "List should")


def problems(change: Callable[[dict[str, Any]], object]) -> list[str]:
    data = copy.deepcopy(BASE)
    change(data)
    try:
        FormularyFile.model_validate(data)
    except ValidationError as error:
        return [f"{key_path(item['loc'])}: {describe(item)}" for item in error.errors()]
    return []


CASES: dict[str, tuple[Callable[[dict[str, Any]], object], str]] = {
    "an id with capitals and a space": (
        lambda d: d["agents"][0].update(id="Bad Id"),
        'agents[1].id: "Bad Id" is not an id osmodose accepts (accepted: lower-case letters, digits, ".", "_" or '
        '"-", starting with a letter or digit, e.g. id = "nacl-3")',
    ),
    "an id too long": (
        lambda d: d["agents"][0].update(id="a" * 41),
        'agents[1].id: is 41 characters long (accepted: at most 40 characters, e.g. id = "nacl-3")',
    ),
    "an empty label": (
        lambda d: d["agents"][0].update(label=""),
        'agents[1].label: is empty (accepted: some text, e.g. label = "Sodium chloride 3 % 250 mL")',
    ),
    "a route not one of the two": (
        lambda d: d["agents"][0].update(route="centrall"),
        'agents[1].route: "centrall" is not a route osmodose knows (accepted: "central-only" or "any-line", '
        'e.g. route = "any-line")',
    ),
    "presentations not a list": (
        lambda d: d["agents"][0].update(presentations="250 mL"),
        "agents[1].presentations: is text, not a list (accepted: a list in square brackets, e.g. presentations = "
        '["250 mL", "500 mL"])',
    ),
    "a label that is true": (
        lambda d: d["agents"][0].update(label=True),
        "agents[1].label: is true or false, not text "
        '(accepted: quoted text, e.g. label = "Sodium chloride 3 % 250 mL")',
    ),
    "no agents": (
        lambda d: d.update(agents=[]),
        'agents: has none (accepted: at least one, e.g. one [[agents]] table per stock solution, with id = "nacl-3")',
    ),
    "[agents] written once, not [[agents]]": (
        lambda d: d.update(agents={"id": "x"}),
        "agents: is a single [agents] table, not a list of agents (accepted: [[agents]] tables, e.g. one [[agents]] "
        'table per stock solution, with id = "nacl-3")',
    ),
    "an age with a word in it": (
        lambda d: d.update(settings={"elderly_age_years": "65 years"}),
        'settings.elderly_age_years: "65 years" is not a number '
        "(accepted: a plain number, e.g. elderly_age_years = 65)",
    ),
    "an age below the range": (
        lambda d: d.update(settings={"elderly_age_years": 30}),
        "settings.elderly_age_years: 30 is below the lowest accepted "
        "(accepted: 40 to 100, e.g. elderly_age_years = 65)",
    ),
    "an age above the range": (
        lambda d: d.update(settings={"adult_age_years": 30}),
        "settings.adult_age_years: 30 is above the highest accepted (accepted: 10 to 25, e.g. adult_age_years = 18)",
    ),
    "an age that is true": (
        lambda d: d.update(settings={"elderly_age_years": True}),
        "settings.elderly_age_years: is true or false, not a number (accepted: a plain number, e.g. "
        "elderly_age_years = 65)",
    ),
    "an ethanol factor not one of the two": (
        lambda d: d.update(settings={"ethanol_factor": "x"}),
        'settings.ethanol_factor: "x" is not an ethanol factor osmodose knows (accepted: "molar" or "empirical", '
        'e.g. ethanol_factor = "molar")',
    ),
    "[settings] as a value": (
        lambda d: d.update(settings="x"),
        "settings: is text, not a table (accepted: a table, e.g. [settings] with elderly_age_years = 65)",
    ),
    "a limit as a list": (
        lambda d: d.update(limits={"sodium_warn": ["155 mmol/L"]}),
        'limits.sodium_warn: is a list, not text (accepted: quoted text, e.g. sodium_warn = "155 mmol/L")',
    ),
    "a limit with no default as a list": (
        lambda d: d.update(limits={"mannitol_24h_max": [2]}),
        'limits.mannitol_24h_max: is a list, not text (accepted: quoted text, e.g. mannitol_24h_max = "1 g/kg")',
    ),
    "a version as a date": (
        lambda d: d["formulary"].update(version=datetime.date(2026, 11, 1)),
        'formulary.version: is a date or time, not text (accepted: quoted text, e.g. version = "2026-11")',
    ),
    "a missing route": (
        lambda d: d["agents"][0].pop("route"),
        'agents[1].route: is required but missing (accepted: add it, e.g. route = "any-line")',
    ),
    "a misspelt key": (
        lambda d: d["formulary"].update(nmae="x"),
        "formulary.nmae: is not a known key (did you mean 'name'?)",
    ),
}


@pytest.mark.parametrize("case", CASES, ids=list(CASES))
def test_each_file_problem_is_worded_by_osmodose(case: str) -> None:
    change, message = CASES[case]
    found = problems(change)
    assert found == [message]
    assert not any(words in found[0] for words in LIBRARY_WORDS)


EPISODE = json.loads((Path(__file__).parent.parent / "examples" / "demo-episode.json").read_text(encoding="utf-8"))


@pytest.mark.parametrize(
    ("change", "message"),
    [
        (
            lambda d: d["patient"].update(weight_kg="x"),
            'patient.weight_kg: "x" is not a number (accepted: a JSON number, e.g. 70.5)',
        ),
        (
            lambda d: d["patient"].update(sex="f"),
            'patient.sex: "f" is not one osmodose knows (accepted: "female" or "male")',
        ),
        (lambda d: d["patient"].pop("sex"), "patient.sex: is required but missing"),
        (
            lambda d: d["labs"][0].update(time="yesterday"),
            'labs[1].time: "yesterday" is not a time with its UTC offset (accepted: ISO 8601, e.g. '
            '"2026-12-01T08:30:00+00:00")',
        ),
        (
            lambda d: d["doses"][0].update(agent_id=""),
            "doses[1].agent_id: is empty (accepted: a value, not an empty one)",
        ),
        (lambda d: d.update(labs="x"), "labs: is text, not a list (accepted: a JSON list in square brackets)"),
        (
            lambda d: d.update(patient=[]),
            "patient: is a list, not an object (accepted: a JSON object in curly brackets)",
        ),
        (
            lambda d: d["patient"].update(label=3),
            "patient.label: is a number, not text (accepted: text in double quotes)",
        ),
    ],
)
def test_each_episode_file_problem_is_worded_by_osmodose(
    change: Callable[[dict[str, Any]], object], message: str
) -> None:
    data = copy.deepcopy(EPISODE)
    change(data)
    with pytest.raises(EpisodeFileError) as caught:
        episode_from_data(data, "ep.json")
    assert str(caught.value) == f"episode ep.json: {message}; the file was not changed"
    assert not any(words in str(caught.value) for words in LIBRARY_WORDS)


#: Each value a parsed file can hold, and its kind in JSON's words and in TOML's.  The kinds are those of
#: RFC 8259 section 3 (object, array, number, string, true, false, null) and of the TOML 1.0.0
#: specification (string, integer, float, boolean, date and time, array, table; TOML has no null).
KINDS: list[tuple[object, str, str]] = [
    (None, "null", "empty"),
    (True, "true or false", "true or false"),
    (3, "a number", "a number"),
    (70.5, "a number", "a number"),
    ("x", "text", "text"),
    ([1, 2], "a list", "a list"),
    ({"a": 1}, "an object", "a table"),
    (datetime.date(2026, 11, 1), "an object", "a date or time"),
]


@pytest.mark.parametrize(("value", "json_words", "toml_words"), KINDS)
def test_a_value_is_named_in_each_file_format_s_words(value: object, json_words: str, toml_words: str) -> None:
    assert value_kind(value, none="null", table="an object", other="an object") == json_words
    assert value_kind(value, none="empty", table="a table", other="a date or time") == toml_words
