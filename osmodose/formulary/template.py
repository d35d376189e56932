"""The commented formulary template `osmodose formulary new` writes for a unit to fill in.

Built from the file model's docstrings and the limits table, so every key,
default and source in it is the one the loader uses; a test proves the
template validates.  Only one agent is active (isotonic saline, whose label
composition is checked by the loader); the rest are examples to copy.
"""

from __future__ import annotations

from pydantic import BaseModel

from osmodose.formulary.field_docs import description
from osmodose.formulary.file_model import AgentEntry, FormularyHeader, SettingsTable
from osmodose.formulary.limits import LIMIT_SPECS, display_unit

_INTRO = """\
# osmodose formulary of ONE unit: its stock solutions and safety limits.
#
# Written by `osmodose formulary new`. To finish it:
#   1. fill in [formulary] and set the limits your local protocol gives;
#   2. list every stock solution the unit keeps as one [[agents]] table;
#   3. run `osmodose formulary validate FILE` until it reports no errors;
#   4. have a second person check `osmodose formulary show FILE` against each label.
# Every key is described in docs/formulary.md; `osmodose formulary schema` writes
# a JSON Schema an editor can check this file with while you type.
#
# Decision support only: verify every figure against local protocol and licensed
# clinical judgement.
"""

_AGENT_INTRO = """\
# One [[agents]] table per stock solution, as labelled. The composition (mmol/L
# sodium, mOsm/L) is derived from the concentration with the molar mass; write the
# label's sodium and osmolarity too, so a mistyped concentration is caught (more
# than 2 % apart rejects the file)."""

#: The active example agent: 0.9 % sodium chloride, 154 mmol/L, 308 mOsm/L (product labels).
_ACTIVE_AGENT = (
    ("id", '"nacl-0.9"'),
    ("label", '"Sodium chloride 0.9 %"'),
    ("solute", '"sodium chloride"'),
    ("concentration", '"0.9% w/v"'),
    ("route", '"any-line"'),
    ("presentations", '["500 mL", "1000 mL"]'),
    ("sodium", '"154 mmol/L"'),
    ("osmolarity", '"308 mOsm/L"'),
)

#: Commented-out examples.  23.4 % sodium chloride: 4 mEq/mL, central line only
#: (product labels); 20 % mannitol: 200 g/L / 182.17 g/mol = 1098 mOsm/L (arithmetic);
#: lactated Ringer's: Na 130, K 4, about 273 mOsm/L (product labels; local products differ).
#: The dose limits are placeholders to replace with the unit's protocol.
_EXAMPLE_AGENTS = (
    (
        ("id", '"nacl-23.4"'),
        ("label", '"Sodium chloride 23.4 % 30 mL vial"'),
        ("solute", '"sodium chloride"'),
        ("concentration", '"23.4% w/v"'),
        ("route", '"central-only"'),
        ("presentations", '["30 mL"]'),
        ("dose_warn", '"0.5 mL/kg"     # your protocol'),
        ("dose_refuse", '"1 mL/kg"     # your protocol'),
        ("max_rate", '"180 mL/h"        # your protocol'),
        ("adult_only", "true             # your protocol"),
        ("sodium", '"4 mEq/mL"'),
        ("codes", '["http://example.org/stock-codes|NACL23.4-30"]  # your records\' codes, for course import'),
    ),
    (
        ("id", '"mannitol-20"'),
        ("label", '"Mannitol 20 % 500 mL"'),
        ("solute", '"mannitol"'),
        ("concentration", '"20% w/v"'),
        ("route", '"central-only"'),
        ("presentations", '["500 mL"]'),
        ("dose_warn", '"1 g/kg"         # your protocol'),
        ("osmolarity", '"1098 mOsm/L"'),
    ),
    (
        ("id", '"lactated-ringers"'),
        ("label", '"Lactated Ringer\'s 1000 mL"'),
        ("solute", '"mixed"'),
        ("route", '"any-line"'),
        ("presentations", '["1000 mL"]'),
        ("sodium", '"130 mmol/L"'),
        ("potassium", '"4 mmol/L"'),
        ("osmolarity", '"273 mOsm/L"'),
    ),
)


def formulary_template() -> str:
    """The whole template as TOML text."""
    parts = [_INTRO, "[formulary]"]
    parts += _described(FormularyHeader, "name", '"Your unit\'s name"')
    parts += _described(FormularyHeader, "version", '"1"')
    parts += ["", "[settings]", "# Unit-wide choices; remove the '#' to change one from its default."]
    for name, info in SettingsTable.model_fields.items():
        parts += [f"# {description(SettingsTable, name)}", f"# {name} = {_toml_value(info.default)}"]
    parts += [
        "",
        "[limits]",
        "# Each limit left commented out takes the default shown, from the source named.",
        "# A finding fires when a figure is strictly above the limit; local protocol always wins.",
    ]
    for name, spec in LIMIT_SPECS.items():
        parts.append(f"# {spec.meaning[0].upper()}{spec.meaning[1:]}.")
        if spec.default is None:
            parts += [f"#   {spec.source}.", f'# {name} = "2 {display_unit(spec.unit)}"  # example only']
        else:
            value = f"{spec.default:g} {display_unit(spec.unit)}"
            parts += [f"#   Default from: {spec.source}.", f'# {name} = "{value}"']
    parts += ["", _AGENT_INTRO, "", "[[agents]]"]
    for key, value in _ACTIVE_AGENT:
        parts += _described(AgentEntry, key, value)
    parts += ["", "# More examples: copy, remove the '#' and check every figure against your own label."]
    for example in _EXAMPLE_AGENTS:
        parts += ["", "# [[agents]]"] + [f"# {key} = {value}" for key, value in example]
    return "\n".join(parts) + "\n"


def _described(model: type[BaseModel], key: str, value: str) -> list[str]:
    return [f"# {description(model, key)}", f"{key} = {value}"]


def _toml_value(value: object) -> str:
    if isinstance(value, str):
        return f'"{value}"'
    if isinstance(value, float):
        return f"{value:g}"
    return str(value)
