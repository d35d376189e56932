"""The formulary after loading: every string turned into a canonical number.

Canonical units: concentrations mmol/L, g/L and mOsm/L; volumes mL; rates
mL/h.  A resolved formulary is what the engine and the rules read; the file
model (`file_model`) is what the unit writes.
"""

from __future__ import annotations

from typing import Literal

from osmodose.errors import InputError
from osmodose.formulary.file_model import SettingsTable
from osmodose.formulary.limits import Limits
from osmodose.frozen import Frozen
from osmodose.science.chemistry import SOLUTES, SoluteName, is_hypertonic

DoseKind = Literal["g/kg", "mL/kg", "mmol/kg", "mOsm/kg"]
Route = Literal["central-only", "any-line"]
DoseWeight = Literal["actual", "ideal", "adjusted"]


class DoseLimit(Frozen):
    """A per-kg dose limit: its value, what it measures and how the file wrote it."""

    value: float
    kind: DoseKind
    text: str


class Agent(Frozen):
    """One stock solution with its derived composition."""

    id: str
    label: str
    solute: SoluteName
    route: Route
    concentration_text: str | None
    solute_g_per_l: float | None
    sodium_mmol_l: float
    potassium_mmol_l: float
    osmolarity_mosm_l: float
    presentations_ml: tuple[float, ...] = ()
    dose_warn: DoseLimit | None = None
    dose_refuse: DoseLimit | None = None
    max_rate_ml_h: float | None = None
    codes: tuple[str, ...] = ()
    """Medication codes ("system|code") that name this stock in the hospital's records."""
    adult_only: bool = False
    dose_weight: DoseWeight = "actual"

    @property
    def central_only(self) -> bool:
        """Whether the agent may run through a central line only."""
        return self.route == "central-only"

    @property
    def cations_mmol_l(self) -> float:
        """Na + K of the infusate, the numerator of the Adrogue-Madias formula."""
        return self.sodium_mmol_l + self.potassium_mmol_l

    @property
    def projects_sodium(self) -> bool:
        """Whether the sodium projection applies (not for mannitol)."""
        return SOLUTES[self.solute].projects_sodium

    @property
    def osmotically_active(self) -> bool:
        """An agent of osmotherapy: hypertonic, with a solute that stays outside cells (saline, bicarbonate,
        mannitol), so its osmoles can be set against another's (equiosmolar doses)."""
        return SOLUTES[self.solute].stays_extracellular and is_hypertonic(self.osmolarity_mosm_l)


class FormularyIdentity(Frozen):
    """Which formulary file: its name and version as written, the SHA-256 of its bytes, its path.

    A loaded `Formulary` is one, and every result carries one (`check.results.FormularyRef`).
    """

    name: str
    version: str
    sha256: str
    path: str
    demo: bool = False
    """True for the bundled demo formulary (an invented unit): every output says DEMO."""


class Formulary(FormularyIdentity):
    """A loaded, validated formulary; `sha256` is of the file's bytes."""

    settings: SettingsTable
    limits: Limits
    agents: tuple[Agent, ...]

    def agent(self, agent_id: str, field: str = "agent") -> Agent:
        """The agent with this id, or an InputError listing the known ids."""
        for agent in self.agents:
            if agent.id == agent_id:
                return agent
        known = ", ".join(a.id for a in self.agents)
        raise InputError(field, agent_id, "is not an agent of this formulary", f"one of: {known}")

    def agent_for_codes(self, codes: tuple[str, ...] | list[str]) -> Agent | None:
        """The agent one of whose `codes` ("system|code") is among `codes`; None when none is mapped."""
        for agent in self.agents:
            if any(code in agent.codes for code in codes):
                return agent
        return None
