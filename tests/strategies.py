"""Hypothesis strategies shared by the property tests, made from the field table where they can be.

Plausible values come from each field's own range (`osmodose.case.fields`, common practice:
chosen to catch typing errors), so a property test explores exactly what a user may type; the
demo formulary's agent ids (an invented unit) name the orders.
"""

from __future__ import annotations

from hypothesis import strategies as st

from osmodose.case.fields import FIELDS

#: The demo formulary's agents (invented unit): all, and those whose sodium is projected.
AGENTS = ("nacl-0.9", "nacl-3", "nacl-7.5", "nacl-23.4", "mannitol-20", "bicarb-8.4", "glucose-5", "lactated-ringers")
PROJECTING = tuple(a for a in AGENTS if a != "mannitol-20")

#: Figures of the projection in canonical units: serum sodium (its plausible range), infusate
#: sodium + potassium from water to 23.4 % saline (4004 mmol/L, label), body water, volume in litres.
SODIUM = st.floats(90, 200)
CATIONS = st.floats(0, 4100)
TBW_L = st.floats(0.5, 250)
VOLUME_L = st.floats(0.0001, 5)


def plausible(key: str) -> st.SearchStrategy[float]:
    """A value inside the field's plausible range, in the unit a bare number means."""
    bounds = FIELDS[key].bounds
    return st.floats(bounds.low, bounds.high)


def plausible_text(key: str, decimals: int = 2) -> st.SearchStrategy[str]:
    """A plausible value typed as a bare number, as a user types it."""
    return plausible(key).map(lambda x: f"{x:.{decimals}f}")


def choice(key: str) -> st.SearchStrategy[str]:
    """One of the field's fixed words."""
    options = FIELDS[key].choice
    assert options is not None, f"{key} is not a choice"
    return st.sampled_from(options.values)


def mostly(good: st.SearchStrategy[object], bad: st.SearchStrategy[object]) -> st.SearchStrategy[object]:
    """Nine times in ten a good value, else a bad one: enough valid cases to reach the deep paths."""
    return st.tuples(st.integers(0, 9), good, bad).map(lambda t: t[2] if t[0] == 9 else t[1])
