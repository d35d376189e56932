"""`osmodose formulary diff OLD NEW`: what an update changes, line by line, in plain words."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from osmodose.cli.main import main
from osmodose.formulary import demo_formulary_path
from tests.formulary_files import write

DEMO_NAME = "Larkspur Point 7N neuro ICU (fictional demo unit)"


def edit(text: str, edits: list[tuple[str, str]]) -> str:
    for old, new in edits:
        assert text.count(old) == 1, old
        text = text.replace(old, new)
    return text


def without_agent(text: str, agent_id: str) -> str:
    start = text.index(f'[[agents]]\nid = "{agent_id}"')
    end = text.index("[[agents]]", start + 1)
    return text[:start] + text[end:]


NEXT_VERSION_EDITS = [
    ('version = "2026-12-demo"', 'version = "2027-01-demo"'),
    ('ethanol_factor = "molar"', 'ethanol_factor = "empirical"'),
    ('sodium_refuse = "160 mmol/L"', 'sodium_refuse = "158 mmol/L"\nosmolality_warn = "305 mOsm/kg"'),
    ('peripheral_osmolarity_warn = "900 mOsm/L"\n', ""),
    ('concentration = "0.9% w/v"', 'concentration = "9 g/L"'),
    (
        'presentations = ["250 mL", "500 mL"]\ndose_warn = "5 mL/kg"',
        'presentations = ["250 mL"]\ndose_warn = "4 mL/kg"\nmax_rate = "999 mL/h"',
    ),
    ('concentration = "7.5% w/v"\nroute = "central-only"', 'concentration = "7.5% w/v"\nroute = "any-line"'),
    ('concentration = "234 g/L"', 'concentration = "23.4% w/v"'),
    ('concentration = "20% w/v"\nroute = "any-line"', 'concentration = "20% w/v"\nroute = "central-only"'),
    ('label = "Glucose 5 % (demo stock)"', 'label = "Glucose 5 % 500 mL (demo stock)"'),
    ('potassium = "4 mmol/L"', 'potassium = "5 mmol/L"'),
]

NEW_AGENT = """
[[agents]]
id = "nacl-2"
label = "Sodium chloride 2 % 500 mL (demo stock)"
solute = "sodium chloride"
concentration = "2% w/v"
route = "any-line"
presentations = ["500 mL"]
"""


def diff(capsys: pytest.CaptureFixture[str], old: Path, new: Path, *extra: str) -> tuple[int, list[str]]:
    code = main(["formulary", "diff", str(old), str(new), *extra])
    return code, capsys.readouterr().out.splitlines()


def test_every_kind_of_change_in_an_update_is_listed_in_order(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    old = demo_formulary_path()
    new_text = without_agent(edit(old.read_text(), NEXT_VERSION_EDITS), "bicarb-8.4") + NEW_AGENT
    new = write(tmp_path, new_text, "next.toml")
    code, lines = diff(capsys, old, new)
    assert code == 1
    assert lines == [
        f'--- {old} ("{DEMO_NAME}" version "2026-12-demo")',
        f'+++ {new} ("{DEMO_NAME}" version "2027-01-demo")',
        # Singled out first: the one change that lets more through.
        "needs attention (loosened, removed, or changed two-fold or more):",
        "  !! agent nacl-7.5: route central line only → peripheral or central: NOW ALLOWED ON A PERIPHERAL LINE "
        "(loosened)",
        'version: "2026-12-demo" → "2027-01-demo"',
        'setting ethanol_factor: "molar" → "empirical"',
        "limit sodium_refuse: 160 mmol/L → 158 mmol/L",
        "limit osmolality_warn: 310 mOsm/kg (default) → 305 mOsm/kg (set in the file)",
        "limit peripheral_osmolarity_warn: 900 mOsm/L, set in the file → default (same value)",
        'agent removed: bicarb-8.4 "Sodium bicarbonate 8.4 % 100 mL (demo stock)"',
        # 2 % NaCl: 20 g/L / 58.44 g/mol = 342 mmol/L, 684 mOsm/L (arithmetic)
        'agent added: nacl-2 "Sodium chloride 2 % 500 mL (demo stock)": 2% w/v, Na 342 mmol/L, 684 mOsm/L, '
        "peripheral or central, presentations 500 mL, dose limits none, max rate none",
        'agent nacl-0.9: concentration "0.9% w/v" → "9 g/L" (same strength)',
        "agent nacl-3: presentations 250 mL, 500 mL → 250 mL",
        "agent nacl-3: dose limits warn > 5 mL/kg; refuse > 10 mL/kg → warn > 4 mL/kg; refuse > 10 mL/kg",
        "agent nacl-3: max rate none → 999 mL/h",
        "agent nacl-7.5: route central line only → peripheral or central: NOW ALLOWED ON A PERIPHERAL LINE",
        'agent nacl-23.4: concentration "234 g/L" → "23.4% w/v" (same strength)',
        "agent mannitol-20: route peripheral or central → central line only: "
        "orders on a peripheral line will now be refused",
        'agent glucose-5: label "Glucose 5 % (demo stock)" → "Glucose 5 % 500 mL (demo stock)"',
        "agent lactated-ringers: potassium 4 mmol/L → 5 mmol/L",
        "16 changes",
    ]


def test_a_tenfold_slip_in_an_update_is_singled_out_at_the_top(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    # A mixed fluid has no concentration to cross-check its label figures against, so a sodium
    # and osmolarity both retyped a tenth (13 for 130 mmol/L, 27.3 for 273 mOsm/L) still load:
    # review is the last check, and the diff puts them first.
    old = demo_formulary_path()
    edits = [
        ('sodium = "130 mmol/L"', 'sodium = "13 mmol/L"'),
        ('osmolarity = "273 mOsm/L"', 'osmolarity = "27.3 mOsm/L"'),
    ]
    new = write(tmp_path, edit(old.read_text(), edits), "slip.toml")
    code, lines = diff(capsys, old, new)
    assert code == 1
    assert lines[2:] == [
        "needs attention (loosened, removed, or changed two-fold or more):",
        "  !! agent lactated-ringers: sodium 130 mmol/L → 13 mmol/L (10-fold change)",
        "  !! agent lactated-ringers: osmolarity 273 mOsm/L → 27 mOsm/L (10-fold change)",
        "agent lactated-ringers: sodium 130 mmol/L → 13 mmol/L",
        "agent lactated-ringers: osmolarity 273 mOsm/L → 27 mOsm/L",
        "2 changes",
    ]


def test_a_doubled_concentration_is_singled_out_with_its_sodium_and_osmolarity(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    # 7.5 % -> 15 %: twice the strength, so twice the sodium (75 / 58.44 x 1000 = 1283 -> 2567
    # mmol/L) and osmolarity (2567 -> 5133 mOsm/L), arithmetic from the molar mass.
    old = demo_formulary_path()
    new = write(tmp_path, edit(old.read_text(), [('concentration = "7.5% w/v"', 'concentration = "15% w/v"')]))
    code, lines = diff(capsys, old, new)
    assert code == 1
    assert lines[2:6] == [
        "needs attention (loosened, removed, or changed two-fold or more):",
        '  !! agent nacl-7.5: concentration "7.5% w/v" → "15% w/v" (2-fold change)',
        "  !! agent nacl-7.5: sodium 1283 mmol/L → 2567 mmol/L (2-fold change)",
        "  !! agent nacl-7.5: osmolarity 2567 mOsm/L → 5133 mOsm/L (2-fold change)",
    ]


@pytest.mark.parametrize(
    ("edits", "flagged"),
    [
        # A ceiling raised: more sodium is let through.
        (
            [('sodium_refuse = "160 mmol/L"', 'sodium_refuse = "165 mmol/L"')],
            "limit sodium_refuse: 160 mmol/L → 165 mmol/L (loosened)",
        ),
        # A floor lowered: judged "below", so lower lets more through.
        (
            [("[limits]", '[limits]\nsodium_low_refuse = "120 mmol/L"')],
            "limit sodium_low_refuse: 125 mmol/L (default) → 120 mmol/L (set in the file) (loosened)",
        ),
        # An agent's maximum rate dropped.
        ([('max_rate = "180 mL/h"\n', "")], "agent nacl-23.4: max rate 180 mL/h → none (removed)"),
        # A dose limit raised.
        (
            [('dose_refuse = "1.5 g/kg"', 'dose_refuse = "2 g/kg"')],
            "agent mannitol-20: dose limits warn > 1 g/kg; refuse > 1.5 g/kg → warn > 1 g/kg; refuse > 2 g/kg "
            "(loosened)",
        ),
        # No longer for adults only.
        (
            [("adult_only = true\n", "")],
            "agent nacl-23.4: dose limits warn > 0.5 mL/kg; refuse > 1 mL/kg; adults only → warn > 0.5 mL/kg; "
            "refuse > 1 mL/kg (no longer for adults only)",
        ),
    ],
)
def test_a_limit_loosened_or_removed_is_singled_out(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], edits: list[tuple[str, str]], flagged: str
) -> None:
    old = demo_formulary_path()
    new = write(tmp_path, edit(old.read_text(), edits))
    code, lines = diff(capsys, old, new)
    assert code == 1
    assert lines[2:4] == ["needs attention (loosened, removed, or changed two-fold or more):", f"  !! {flagged}"]


def test_a_limit_tightened_is_not_singled_out(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    old = demo_formulary_path()
    new = write(tmp_path, edit(old.read_text(), [('sodium_refuse = "160 mmol/L"', 'sodium_refuse = "158 mmol/L"')]))
    code, lines = diff(capsys, old, new)
    assert (code, lines[2:]) == (1, ["limit sodium_refuse: 160 mmol/L → 158 mmol/L", "1 change"])


def test_name_and_solute_changes(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    old = demo_formulary_path()
    new_text = edit(
        old.read_text(),
        [
            (f'name = "{DEMO_NAME}"', 'name = "Larkspur Point 7S (fictional demo unit)"'),
            ('solute = "glucose"', 'solute = "mannitol"'),
        ],
    )
    new = write(tmp_path, new_text, "renamed.toml")
    code, lines = diff(capsys, old, new)
    assert code == 1
    assert lines[2:] == [
        f'name: "{DEMO_NAME}" → "Larkspur Point 7S (fictional demo unit)"',
        "agent glucose-5: solute glucose → mannitol",
        # 50 g/L of mannitol: 50 / 182.17 = 274.5 mOsm/L, glucose 50 / 180.16 = 277.5 (arithmetic)
        "agent glucose-5: osmolarity 278 mOsm/L → 274 mOsm/L",
        "3 changes",
    ]


def test_identical_files_are_no_change_and_exit_zero(capsys: pytest.CaptureFixture[str]) -> None:
    demo = demo_formulary_path()
    code, lines = diff(capsys, demo, demo)
    assert code == 0
    assert lines[2:] == ["no changes (the files are identical)"]


def test_comments_and_layout_are_no_change_in_meaning(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    demo = demo_formulary_path()
    new = write(tmp_path, "# reviewed by the unit pharmacist (invented)\n\n" + demo.read_text(), "commented.toml")
    code, lines = diff(capsys, demo, new)
    assert code == 0
    assert lines[2:] == ["no changes in meaning (the files differ only in comments, layout or order)"]


def test_diff_json_lists_each_change(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    old = demo_formulary_path()
    new = write(tmp_path, edit(old.read_text(), NEXT_VERSION_EDITS[6:7]), "route.toml")
    assert main(["formulary", "diff", str(old), str(new), "--json"]) == 1
    document = json.loads(capsys.readouterr().out)
    assert document["changes"] == [
        {
            "area": "agents",
            "subject": "nacl-7.5",
            "key": "route",
            "old": "central line only",
            "new": "peripheral or central",
            "attention": "loosened",
            "text": "agent nacl-7.5: route central line only → peripheral or central: NOW ALLOWED ON A PERIPHERAL LINE",
        }
    ]
    assert document["attention"] == [document["changes"][0]["text"]]


def test_one_change_is_counted_in_the_singular(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    old = demo_formulary_path()
    new = write(tmp_path, edit(old.read_text(), NEXT_VERSION_EDITS[:1]), "bumped.toml")
    code, lines = diff(capsys, old, new)
    assert (code, lines[2:]) == (1, ['version: "2026-12-demo" → "2027-01-demo"', "1 change"])


def test_a_new_version_that_does_not_load_is_one_line_and_exit_two(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    old = demo_formulary_path()
    new = write(tmp_path, edit(old.read_text(), [('sodium_refuse = "160 mmol/L"', 'sodium_refuze = "160 mmol/L"')]))
    assert main(["formulary", "diff", str(old), str(new)]) == 2
    assert capsys.readouterr().err == (
        f"osmodose: formulary {new}:25: limits.sodium_refuze: is not a known key (did you mean 'sodium_refuse'?)\n"
    )
