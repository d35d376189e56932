"""Molar masses against the atomic weights, and the composition of the stock solutions."""

from __future__ import annotations

import pytest

from osmodose.formulary import Formulary, load_formulary
from osmodose.science.chemistry import MOLAR_MASS_G_PER_MOL, SOLUTES, molar_mass

# Conventional atomic weights, IUPAC Commission on Isotopic Abundances and Atomic Weights (CIAAW).
ATOMIC_WEIGHT = {"Na": 22.990, "Cl": 35.45, "C": 12.011, "H": 1.008, "O": 15.999, "N": 14.007}

FORMULA = {
    "sodium chloride": {"Na": 1, "Cl": 1},
    "mannitol": {"C": 6, "H": 14, "O": 6},
    "glucose": {"C": 6, "H": 12, "O": 6},
    "urea": {"C": 1, "H": 4, "N": 2, "O": 1},
    "urea nitrogen": {"N": 2},  # BUN is reported as nitrogen: two N per urea
    "sodium bicarbonate": {"Na": 1, "H": 1, "C": 1, "O": 3},
    "ethanol": {"C": 2, "H": 6, "O": 1},
    "glucose monohydrate": {"C": 6, "H": 14, "O": 7},  # C6H12O6.H2O
}


@pytest.mark.parametrize("substance", list(FORMULA))
def test_molar_mass_from_the_ciaaw_atomic_weights(substance: str) -> None:
    # Sum of CIAAW conventional atomic weights, rounded to the table's two decimals.
    computed = sum(ATOMIC_WEIGHT[element] * count for element, count in FORMULA[substance].items())
    assert MOLAR_MASS_G_PER_MOL[substance] == pytest.approx(computed, abs=0.005)
    assert molar_mass(substance).m_as("g/mol") == MOLAR_MASS_G_PER_MOL[substance]


def test_every_molar_mass_in_the_table_is_checked() -> None:
    assert set(MOLAR_MASS_G_PER_MOL) == set(FORMULA)


@pytest.mark.parametrize(
    ("name", "osmoles_per_mole", "sodium_per_mole"),
    [
        ("sodium chloride", 2.0, 1.0),  # Na+ and Cl-: full dissociation (theoretical osmolarity)
        ("sodium bicarbonate", 2.0, 1.0),  # Na+ and HCO3-
        ("mannitol", 1.0, 0.0),
        ("glucose", 1.0, 0.0),
        ("glucose monohydrate", 1.0, 0.0),  # the same glucose molecule, weighed with its water
    ],
)
def test_solute_particles(name: str, osmoles_per_mole: float, sodium_per_mole: float) -> None:
    solute = SOLUTES[name]
    assert (solute.osmoles_per_mole, solute.sodium_per_mole) == (osmoles_per_mole, sodium_per_mole)


def test_mannitol_alone_projects_no_sodium() -> None:
    assert [name for name, solute in SOLUTES.items() if not solute.projects_sodium] == ["mannitol"]


# Sodium (mmol/L) and theoretical osmolarity (mOsm/L) of stock solutions, with the source of each row:
# "product label" = the figures printed on the product labels; "arithmetic from molar mass" =
# g/L / molar mass (CIAAW atomic weights) x particles per formula unit (full dissociation).
COMPOSITION = [
    # solute, % w/v, Na, mOsm/L, source
    ("sodium chloride", 0.9, 154, 308, "product label"),
    # Dextrose 5 % weighed as the monohydrate: 50 g/L / 198.17 g/mol = 252.3 mOsm/L (arithmetic; the
    # 252 mOsm/L printed on such labels).
    ("glucose monohydrate", 5.0, 0, 252, "arithmetic from molar mass"),
    ("sodium chloride", 0.45, 77, 154, "product label"),
    ("sodium chloride", 2.0, 342, 684, "arithmetic from molar mass: 20 / 58.44 = 342.2"),
    ("sodium chloride", 3.0, 513, 1027, "product label"),
    ("sodium chloride", 7.5, 1283, 2567, "arithmetic from molar mass: 75 / 58.44 = 1283.4"),
    ("sodium chloride", 23.4, 4004, 8008, "product label (4 mEq/mL); arithmetic 234 / 58.44 = 4004.1"),
    ("mannitol", 20.0, 0, 1098, "arithmetic from molar mass: 200 / 182.17 = 1097.9, as for the 25 % label"),
    ("mannitol", 25.0, 0, 1372, "product label"),
    ("sodium bicarbonate", 8.4, 1000, 2000, "arithmetic from molar mass: 84 / 84.01 = 999.9"),
    ("glucose", 5.0, 0, 278, "arithmetic from molar mass: 50 / 180.16 = 277.5"),
]


@pytest.fixture(scope="module")
def derived(tmp_path_factory: pytest.TempPathFactory) -> Formulary:
    """One agent per row, composition derived from the concentration alone (no explicit label values)."""
    tmp_path = tmp_path_factory.mktemp("composition")
    blocks = ['[formulary]\nname = "Composition test (invented)"\nversion = "1"\n']
    for number, (solute, percent, _na, _osm, _source) in enumerate(COMPOSITION, start=1):
        blocks.append(
            f'[[agents]]\nid = "a{number}"\nlabel = "{solute} {percent} %"\nsolute = "{solute}"\n'
            f'concentration = "{percent}% w/v"\nroute = "central-only"\n'
        )
    path = tmp_path / "composition.toml"
    path.write_text("\n".join(blocks), encoding="utf-8")
    return load_formulary(path)


@pytest.mark.parametrize(("number", "row"), list(enumerate(COMPOSITION, start=1)))
def test_sodium_and_theoretical_osmolarity_of_stock_solutions(derived: Formulary, number: int, row: tuple) -> None:
    _solute, percent, sodium, osmolarity, _source = row
    agent = derived.agent(f"a{number}")
    assert agent.solute_g_per_l == pytest.approx(percent * 10)
    # The tabulated figures are whole numbers: the derived ones agree within rounding.
    assert agent.sodium_mmol_l == pytest.approx(sodium, abs=0.5)
    assert agent.osmolarity_mosm_l == pytest.approx(osmolarity, abs=0.5)


def test_the_demo_formulary_labels_agree_with_the_arithmetic(demo: Formulary) -> None:
    # Explicit label figures are kept, and each was accepted within 2 % of the derived value.
    assert demo.agent("nacl-0.9").sodium_mmol_l == 154.0
    assert demo.agent("nacl-3").osmolarity_mosm_l == 1027.0
    assert demo.agent("nacl-23.4").sodium_mmol_l == pytest.approx(4000.0)  # "4 mEq/mL"
    # No osmolarity in the file: it follows the label sodium, 2 x 4000 = 8000 mOsm/L, so the
    # agent's two figures agree (234 g/L alone would give 2 x 234 / 58.44 x 1000 = 8008).
    assert demo.agent("nacl-23.4").osmolarity_mosm_l == pytest.approx(8000.0)
    ringers = demo.agent("lactated-ringers")
    assert (ringers.sodium_mmol_l, ringers.potassium_mmol_l, ringers.cations_mmol_l) == (130.0, 4.0, 134.0)
    assert ringers.solute_g_per_l is None
