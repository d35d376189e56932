"""Property: every audited row has the figures, findings or error a single check of it has.

Random tables (invented values, random header units, random dose styles) are
written as CSV, audited in small chunks, and each row is also given to
`run_check` as the typed text `osmodose check` would get.  Any figure, finding,
message or error that differs is a failure.
"""

from __future__ import annotations

import csv
import io
import math
import tempfile
from pathlib import Path

from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st

from osmodose.audit.columns import check_fields, parse_header
from osmodose.audit.output import CsvResults, row_dicts
from osmodose.audit.run import FIGURES, run_audit
from osmodose.case.inputs import parse_check_request
from osmodose.check.run import run_check
from osmodose.errors import InputError
from osmodose.formulary import demo_formulary_path, load_formulary

DEMO = load_formulary(demo_formulary_path())
AGENTS = [a.id for a in DEMO.agents]

#: column -> units a header may give it ("" = no unit: check's default).
HEADER_UNITS = {
    "weight": ["", "kg", "lb"],
    "age": ["", "year"],
    "height": ["", "cm", "m"],
    "sodium": ["", "mmol/L", "mEq/L"],
    "potassium": ["", "mmol/L"],
    "glucose": ["", "mmol/L", "mg/dL"],
    "urea": ["", "mmol/L", "mg/dL"],
    "bun": ["", "mg/dL", "mmol/L"],
    "ethanol": ["", "mg/dL"],
    "osmolality": ["", "mOsm/kg", "mmol/kg"],
    "volume": ["", "mL", "L"],
    "urine-volume": ["", "mL", "L"],
    "urine-sodium": ["", "mmol/L"],
    "urine-potassium": ["", "mmol/L"],
    "target-rise": ["", "mmol/L"],
    "duration": ["", "min", "h"],
}
#: Plausible values in each column's default unit, and a wider band that is sometimes outside.
RANGES = {
    "weight": (2.0, 200.0),
    "age": (0.5, 100.0),
    "height": (50.0, 210.0),
    "sodium": (100.0, 175.0),
    "potassium": (2.0, 7.0),
    "glucose": (2.0, 40.0),
    "urea": (1.0, 40.0),
    "bun": (3.0, 100.0),
    "ethanol": (0.0, 90.0),
    "osmolality": (240.0, 400.0),
    "volume": (5.0, 1500.0),
    # Urine over the infusion (invented): large volumes against a small patient give check's error.
    "urine-volume": (0.0, 3000.0),
    "urine-sodium": (5.0, 200.0),
    "urine-potassium": (5.0, 100.0),
    "target-rise": (-15.0, 15.0),
    "duration": (2.0, 600.0),
}
#: (column, header unit) -> factor from the RANGES unit to the header unit (roughly: these are invented values).
TO_HEADER_UNIT = {
    ("weight", "lb"): 2.2,
    ("height", "m"): 0.01,
    ("volume", "L"): 0.001,
    ("urine-volume", "L"): 0.001,
    ("duration", "h"): 1 / 60,
    ("glucose", "mg/dL"): 18.0,
    ("urea", "mg/dL"): 6.0,
    ("ethanol", "mg/dL"): 4.6,
    ("bun", "mmol/L"): 0.36,
}
DOSE_TEXTS = ["1 g/kg", "0.5 g/kg", "2g/kg", "5 mL/kg", "3 mL/kg", "2 mmol/kg", "50 g", "250 mL", "0.25 L"]
DOSE_TEXTS += [
    "120 mmol",
    "300 mOsm",
    "500 mg/kg",
    "0 g/kg",
    "1.5",
    "2 furlongs",
    "-1 g",
    "1 g/kg/h",
    "30mL",
    "1e999 g/kg",
]


def _number(draw: st.DrawFn, column: str, unit: str, spoil: bool) -> str:
    low, high = RANGES[column]
    if spoil:  # outside the range, unreadable, or a unit in the cell
        return draw(st.sampled_from([f"{high * 20:g}", "-5", "abc", "1_0", "nan", "1,5", "70kg", "3 mmol/L", "1e999"]))
    value = draw(st.floats(low, high))
    value *= TO_HEADER_UNIT.get((column, unit), 1.0)
    return draw(st.sampled_from([f"{value:.1f}", f"{value:.4g}", repr(value)]))


@st.composite
def tables(draw: st.DrawFn) -> tuple[list[str], list[list[str]], dict[str, str]]:
    optional = [c for c in ("height", "potassium", "glucose", "ethanol", "osmolality") if draw(st.booleans())]
    optional += draw(
        st.sampled_from([[], ["urine-volume", "urine-sodium"], ["urine-volume", "urine-sodium", "urine-potassium"]])
    )
    # Hypothesis favours the first choice of each draw: make it the valid, common one.
    optional += draw(st.sampled_from([["urea"], ["bun"], [], ["urea"], ["bun"], [], ["urea", "bun"]]))
    orders = draw(st.sampled_from([["dose"], ["volume"], ["target-rise"], []] * 2 + [["dose", "volume"]]))
    extra = [c for c in ("duration", "line", "tbw-method") if orders and draw(st.booleans())]
    columns = ["weight", "age", "sex", "sodium", *optional, *(["agent"] if orders else []), *orders, *extra]
    units = {c: draw(st.sampled_from(HEADER_UNITS[c])) for c in columns if c in HEADER_UNITS}
    dose_style = draw(st.sampled_from(["cell", "header", "column"])) if "dose" in columns else "cell"
    if dose_style == "header":
        units["dose"] = draw(st.sampled_from(["g/kg", "mL/kg", "mL"]))
    if dose_style == "column":
        columns.append("dose-unit")
    rows = []
    for _ in range(draw(st.integers(1, 7))):
        # About one row in three has one thing wrong with it; the others are valid as typed.
        spoilt = draw(st.sampled_from(columns)) if draw(st.integers(0, 2)) == 2 else None
        row = {}
        for c in columns:
            bad = c == spoilt
            if c in RANGES:
                required = c in ("weight", "age", "sodium")
                row[c] = _number(draw, c, units.get(c, ""), bad)
                if bad and draw(st.integers(0, 4)) == 4:
                    row[c] = ""  # missing: an error only where required
                elif not required and not bad and c not in orders and draw(st.integers(0, 3)) == 3:
                    row[c] = ""
            elif c == "sex":
                row[c] = draw(st.sampled_from(["x", ""] if bad else ["female", "male", "Male "]))
            elif c == "agent":
                row[c] = draw(st.sampled_from(["nacl-9", ""] if bad else AGENTS))
            elif c == "dose":
                choices = DOSE_TEXTS[9:] if bad else DOSE_TEXTS[:9]
                text = draw(st.sampled_from(choices))
                if dose_style != "cell":
                    text = text.split()[0] if " " in text else text
                row[c] = text
            elif c == "dose-unit":
                row[c] = draw(st.sampled_from(["furlong", ""] if bad else ["g/kg", "mL/kg", "mmol", "mL", "mOsm"]))
            elif c == "line":
                row[c] = draw(st.sampled_from(["arterial"] if bad else ["", "central", "peripheral", "Peripheral"]))
            elif c == "tbw-method":
                row[c] = draw(st.sampled_from(["guess"] if bad else ["", "fraction", "watson"]))
        rows.append(row)
    header = [f"{c}[{units[c]}]" if units.get(c) else c for c in columns]
    return header, [[row[c] for c in columns] for row in rows], units


def _check_fields(header: list[str], row: list[str]) -> dict[str, object]:
    """The text osmodose check is typed for this row: the cell, then the header's unit."""
    fields: dict[str, object] = {}
    cells = {}
    for written, cell in zip(header, row, strict=True):
        name, _, unit = written.partition("[")
        cells[name] = (cell.strip(), unit.rstrip("]"))
    for name, (cell, unit) in cells.items():
        if name == "dose-unit":
            continue
        text = cell
        if name == "dose" and "dose-unit" in cells and cell and cells["dose-unit"][0]:
            text = f"{cell} {cells['dose-unit'][0]}"
        fields[name] = f"{text} {unit}" if text and unit else text
    return fields


def _close(a: float | None, b: float | None) -> bool:
    if a is None or b is None:
        return a is None and b is None
    return math.isclose(a, b, rel_tol=1e-9, abs_tol=1e-12)


def _expected_figures(result: dict) -> dict[str, float | None]:
    dose = result["dose"] or {}
    return {
        "total_body_water_l": result["patient"]["total_body_water_l"],
        "calculated_osmolality_mosm_kg": result["calculated_osmolality_mosm_kg"],
        "effective_osmolality_mosm_kg": result["effective_osmolality_mosm_kg"],
        "osmolar_gap_mosm_kg": result["osmolar_gap_mosm_kg"],
        **{k: dose.get(k) for k in ("volume_ml", "solute_g", "sodium_mmol", "osmoles_mosm", "rate_ml_h")},
        **{k: dose.get(k) for k in ("volume_ml_per_kg", "solute_g_per_kg", "sodium_mmol_per_kg")},
        "sodium_change_per_litre_mmol_l": result["sodium_change_per_litre_mmol_l"],
        "projected_sodium_mmol_l": result["projected_sodium_mmol_l"],
        "projected_sodium_rise_mmol_l": result["projected_sodium_rise_mmol_l"],
        "projected_sodium_without_losses_mmol_l": result.get("projected_sodium_without_losses_mmol_l"),
        "projected_sodium_range_low_mmol_l": (result.get("projected_sodium_range_mmol_l") or [None, None])[0],
        "projected_sodium_range_high_mmol_l": (result.get("projected_sodium_range_mmol_l") or [None, None])[1],
        "electrolyte_free_water_clearance_l": result.get("electrolyte_free_water_clearance_l"),
        "free_water_deficit_l": result.get("free_water_deficit_l"),
    }


def audit_rows(header: list[str], rows: list[list[str]], chunk_rows: int = 3) -> list[dict]:
    """The audit's JSON rows; its CSV rows are checked against them on the way."""
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "orders.csv"
        with open(path, "w", newline="", encoding="utf-8") as handle:
            writer = csv.writer(handle)
            writer.writerow(header)
            writer.writerows(rows)
        out: list[dict] = []

        class Collect:
            def add(self, chunk) -> None:
                out.extend(row_dicts(chunk))

            def close(self) -> None:
                pass

        written = io.BytesIO()
        run_audit(path, DEMO, [Collect(), CsvResults(written, with_order_id=False)], chunk_rows=chunk_rows)
    _csv_matches_json(written.getvalue().decode("utf-8"), out)
    return out


def _csv_matches_json(text: str, rows: list[dict]) -> None:
    """The CSV results read back (any CSV reader) as the JSON rows, figures exactly."""
    table = list(csv.DictReader(io.StringIO(text)))
    assert len(table) == len(rows)
    for line, row in zip(table, rows, strict=True):
        assert int(line["row"]) == row["row"]
        assert line["status"] == row["status"]
        assert (line["reason"] or None) == row["reason"]
        assert (line["agent"] or None) == row["agent"]
        for name, _ in FIGURES:
            assert (float(line[name]) if line[name] else None) == row[name], name
        assert line["findings"] == ";".join(f"{f['code']}:{f['severity']}" for f in row["findings"])
        assert line["messages"] == " | ".join(f["message"] for f in row["findings"])


#: BUN judged in mg/dL of nitrogen, as check does (1.4 to 280.1 mg/dL), not as urea in mmol/L:
#: 2000 mmol/L was refused with the urea range's words, and 2000 mg/dL (71.4 mmol/L of urea) accepted.
BUN_ROWS = [["70", "40", "male", "140", "2000"], ["70", "40", "male", "140", "-5"], ["70", "40", "male", "140", "90"]]


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(tables())
@example((["weight", "age", "sex", "sodium", "bun[mmol/L]"], BUN_ROWS, {"bun": "mmol/L"}))
@example((["weight", "age", "sex", "sodium", "bun"], BUN_ROWS, {"bun": ""}))
@example(
    (
        ["weight", "age[year]", "sex", "sodium", "agent", "dose"],
        # Plain to float() but infinite: check refuses each as not a finite number.
        [
            ["1e999", "40", "male", "140", "mannitol-20", "1 g/kg"],
            ["70", "-1e999", "male", "140", "nacl-3", "2 mL/kg"],
            ["70", "40", "male", "140", "mannitol-20", "1e999 g/kg"],
        ],
        {"age": "year"},
    )
)
def test_every_audited_row_equals_a_single_check_of_it(table) -> None:
    header, rows, _ = table
    audited = audit_rows(header, rows)
    assert [r["row"] for r in audited] == list(range(2, 2 + len(rows)))
    parsed = parse_header(Path("orders.csv"), header)
    for row, got in zip(rows, audited, strict=True):
        fields = _check_fields(header, row)
        assert check_fields(parsed, row) == fields  # the benchmark's row-by-row path types the same text
        try:
            expected = run_check(parse_check_request(fields), DEMO).to_json()
        except InputError as error:
            assert got["status"] == "error", (row, got)
            assert got["reason"] == str(error), row
            continue
        assert got["status"] == expected["status"], (row, got)
        assert got["reason"] is None
        assert got["tbw_method"] == expected["patient"]["tbw_method"]
        for name, value in _expected_figures(expected).items():
            assert _close(got[name], value), (name, got[name], value, row)
        assert len(got["findings"]) == len(expected["findings"]), (row, got["findings"], expected["findings"])
        for mine, theirs in zip(got["findings"], expected["findings"], strict=True):
            assert (mine["code"], mine["severity"], mine["message"], mine["unit"]) == (
                theirs["code"],
                theirs["severity"],
                theirs["message"],
                theirs["unit"],
            )
            assert _close(mine["value"], theirs["value"]) and _close(mine["limit"], theirs["limit"])


def test_output_figure_names_are_those_of_check_json() -> None:
    # Every figure the audit writes is one a check reports under the same name (osmoles per kg aside).
    names = {name for name, _ in FIGURES} - {"osmoles_mosm_per_kg"}
    expected = set(
        _expected_figures(
            {"dose": None, "patient": {"total_body_water_l": 0}}
            | dict.fromkeys(
                [
                    "calculated_osmolality_mosm_kg",
                    "effective_osmolality_mosm_kg",
                    "osmolar_gap_mosm_kg",
                    "sodium_change_per_litre_mmol_l",
                    "projected_sodium_mmol_l",
                    "projected_sodium_rise_mmol_l",
                ]
            )
        )
    )
    assert names == expected
