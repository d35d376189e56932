"""Invariants of loading and comparing formularies, over many strengths."""

from __future__ import annotations

import tempfile
from pathlib import Path

from hypothesis import given, settings
from hypothesis import strategies as st

from osmodose.formulary import load_formulary
from osmodose.formulary.diff import diff_formularies
from osmodose.formulary.validate import validate_formulary
from osmodose.science.chemistry import MOLAR_MASS_G_PER_MOL
from osmodose.science.ranges import SOLUTE_STRENGTH
from tests.formulary_files import NO_COMPOSITION_LINES, edited

NACL = SOLUTE_STRENGTH["sodium chloride"]


def _file(folder: Path, name: str, concentration: str) -> Path:
    """The test unit's agent at `concentration`, with no strength in its id or label and no dose limits.

    A strength printed in the id or label ten times the concentration is a slipped decimal point
    (an error of its own), and a per-kg volume limit fits one strength only: both are left out so
    the concentration alone is judged.
    """
    path = folder / name
    replace = {10: 'id = "nacl"', 11: 'label = "Sodium chloride"', 13: f'concentration = "{concentration}"'}
    path.write_text(edited({**replace, **NO_COMPOSITION_LINES, 18: "", 19: ""}))
    return path


@settings(max_examples=40, deadline=None)
@given(st.decimals(min_value="0.10", max_value="30.00", places=2))
def test_a_strength_written_as_percent_or_as_grams_per_litre_is_the_same_agent(percent: object) -> None:
    with tempfile.TemporaryDirectory() as folder:
        as_percent = load_formulary(_file(Path(folder), "a.toml", f"{percent}% w/v"))
        as_grams = load_formulary(_file(Path(folder), "b.toml", f"{percent * 10} g/L"))  # type: ignore[operator]
    one, other = as_percent.agents[0], as_grams.agents[0]
    # Na mmol/L = g/L / 58.44 g/mol x 1000 (molar mass, IUPAC/CIAAW).
    grams = float(percent) * 10  # type: ignore[arg-type]
    assert abs(one.sodium_mmol_l - grams / MOLAR_MASS_G_PER_MOL["sodium chloride"] * 1000) < 1e-6
    assert abs(one.sodium_mmol_l - other.sodium_mmol_l) < 1e-6
    changes = diff_formularies(as_percent, as_grams)
    assert [c.key for c in changes] == ["concentration"]
    assert changes[0].text.endswith("(same strength)")


@settings(max_examples=40, deadline=None)
@given(st.floats(min_value=0.001, max_value=200.0))
def test_a_sodium_chloride_strength_loads_exactly_when_it_is_in_the_range(percent: float) -> None:
    with tempfile.TemporaryDirectory() as folder:
        verdict = validate_formulary(_file(Path(folder), "c.toml", f"{percent!r}% w/v"))
    assert verdict.valid == NACL.contains(percent)


def test_every_solute_with_a_molar_mass_has_a_plausible_strength() -> None:
    from osmodose.science.chemistry import SOLUTES

    with_mass = {name for name, solute in SOLUTES.items() if solute.molar_mass_g_per_mol is not None}
    assert set(SOLUTE_STRENGTH) == with_mass
