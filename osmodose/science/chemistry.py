"""Molar masses and the solutes osmodose knows, in one table each.

Molar masses are computed from IUPAC/CIAAW conventional atomic weights and
rounded to two decimals.  A solute's
`osmoles_per_mole` assumes full dissociation (the theoretical osmolarity
printed on product labels); measured osmolality is lower (NaCl osmotic
coefficient about 0.93), which osmodose does not model.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

from osmodose.science.units import Q_, Quantity

#: g/mol; source: IUPAC/CIAAW conventional atomic weights.
MOLAR_MASS_G_PER_MOL: dict[str, float] = {
    "sodium chloride": 58.44,  # NaCl
    "mannitol": 182.17,  # C6H14O6
    "glucose": 180.16,  # C6H12O6
    "urea": 60.06,  # CH4N2O
    "urea nitrogen": 28.01,  # N2: BUN is reported as mg of nitrogen, two N per urea
    "sodium bicarbonate": 84.01,  # NaHCO3
    "ethanol": 46.07,  # C2H5OH
}


def molar_mass(substance: str) -> Quantity:
    """Molar mass of a substance in the table, as a quantity in g/mol."""
    return Q_(MOLAR_MASS_G_PER_MOL[substance], "g/mol")


SoluteName = Literal["sodium chloride", "mannitol", "sodium bicarbonate", "glucose", "mixed"]


@dataclass(frozen=True)
class Solute:
    """What one mole of a solute brings into the patient.

    `mixed` stands for a fluid of several solutes (lactated Ringer's and the
    like): it has no single molar mass, so a formulary must give its sodium,
    potassium and osmolarity explicitly.
    """

    name: SoluteName
    molar_mass_g_per_mol: float | None
    sodium_per_mole: float
    osmoles_per_mole: float
    #: Solutes that stay extracellular and carry no sodium: no sodium projection.
    projects_sodium: bool


SOLUTES: dict[str, Solute] = {
    s.name: s
    for s in (
        Solute("sodium chloride", MOLAR_MASS_G_PER_MOL["sodium chloride"], 1.0, 2.0, True),
        Solute("sodium bicarbonate", MOLAR_MASS_G_PER_MOL["sodium bicarbonate"], 1.0, 2.0, True),
        Solute("mannitol", MOLAR_MASS_G_PER_MOL["mannitol"], 0.0, 1.0, False),
        # Glucose is metabolised: the infusate becomes free water, so it projects
        # like a sodium-free fluid (Adrogue-Madias treat 5 % dextrose as Na 0).
        Solute("glucose", MOLAR_MASS_G_PER_MOL["glucose"], 0.0, 1.0, True),
        Solute("mixed", None, 0.0, 0.0, True),
    )
}
