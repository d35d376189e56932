"""`osmodose audit` from the command line: header errors, bad rows, outputs, summary, progress.

Patients and orders are invented; figures are worked by hand beside each value.
"""

from __future__ import annotations

import csv
import io
import json
from pathlib import Path

import pytest

from osmodose.cli.main import main

HEAD = "order-id,weight,age,sex,sodium,glucose[mg/dL],urea,agent,dose,volume,duration,line"


def write(tmp_path: Path, text: str, name: str = "orders.csv") -> Path:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def run(capsys: pytest.CaptureFixture[str], *args: str) -> tuple[int, str, str]:
    code = main(["audit", *args])
    out, err = capsys.readouterr()
    return code, out, err


@pytest.mark.parametrize(
    ("header", "message"),
    [
        (
            "weigth,age,sex,sodium",
            "column weigth (header field 1): is not a column osmodose knows (accepted: order-id, weight, age, sex, "
            "height, tbw-method, raised-icp, sodium, potassium, glucose, urea, bun, ethanol, osmolality, "
            "urine-volume, urine-sodium, urine-potassium, agent, dose, dose-unit, volume, target-rise, target-sodium, "
            "duration, line)",
        ),
        ("weight,age,sex", "column sodium: is required"),
        ("weight,age,sex,sodium,Weight", "column Weight (header field 5): appears twice (also header field 1)"),
        (
            "weight[mL],age,sex,sodium",
            "column weight[mL] (header field 1): has a unit in the wrong dimension (accepted: kg)",
        ),
        (
            "weight,age,sex,sodium,glucose[mgdl]",
            "column glucose[mgdl] (header field 5): has a unit osmodose cannot read (accepted: mmol/L or mg/dL)",
        ),
        ("weight,age,sex[kg],sodium", "column sex[kg] (header field 3): takes no unit"),
        (
            "weight,age,sex,sodium,dose",
            "column agent: is required with a dose, volume, target-rise or target-sodium column",
        ),
        (
            "weight,age,sex,sodium,agent",
            "column agent (header field 5): needs a dose, volume, target-rise or target-sodium column",
        ),
        (
            "weight,age,sex,sodium,agent,dose[g/kg],dose-unit",
            "column dose-unit (header field 7): cannot be used when the dose header has a unit",
        ),
        ("weight,age,,sex,sodium", 'column "" (header field 3): has no name'),
    ],
)
def test_a_bad_header_stops_with_one_line_naming_the_column(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], header: str, message: str
) -> None:
    path = write(tmp_path, header + "\n70,40,male,140\n")
    code, out, err = run(capsys, str(path))
    assert (code, out) == (2, "")
    assert err == f"osmodose: orders {path}: {message}\n"


def test_an_empty_file_stops_with_a_clear_message(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    path = write(tmp_path, "")
    assert run(capsys, str(path)) == (
        2,
        "",
        f"osmodose: orders {path}: is empty: it needs a header row naming its columns\n",
    )


def test_a_missing_file_stops_with_a_clear_message(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    path = tmp_path / "nowhere.csv"
    assert run(capsys, str(path)) == (2, "", f"osmodose: orders {path}: cannot be read (No such file or directory)\n")


ORDERS = (
    HEAD + "\n"
    # 70 kg man, 1 g/kg of 20 % mannitol (200 g/L): 70 g = 350 mL = 5 mL/kg; 350 mL over 20 min = 1050 mL/h.
    "A1,70,45,male,141,180.16,5,mannitol-20,1 g/kg,,20,\n"
    "A2,4000,45,male,141,90,5,nacl-3,,250,15,peripheral\n"  # weight slipped a decimal point
    "\n"  # blank lines are skipped, row numbers stay those of the file
    "A3,70,45,male,141,90,5,nacl-9,,250,15,peripheral\n"  # no such agent
    "A4,70,45,male,141,90,5\n"  # fields missing
    "A5,70,45,male,,90,5,nacl-3,,250,15,peripheral\n"  # sodium missing
    "A6,70,45,male,141,90,5,nacl-3,,250,15,peripheral\n"
)


def test_bad_rows_are_reported_with_row_and_reason_and_good_rows_still_come_out(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = write(tmp_path, ORDERS)
    code, out, err = run(capsys, str(path))
    assert code == 1  # some rows could not be audited
    assert err.splitlines() == [
        f"osmodose: {path} row 3: weight: 4000 is outside the plausible range (accepted: 0.3 to 400 kg)",
        f"osmodose: {path} row 5: agent: nacl-9 is not an agent of this formulary (accepted: one of: nacl-0.9, "
        "nacl-3, nacl-7.5, nacl-23.4, mannitol-20, bicarb-8.4, glucose-5, lactated-ringers)",
        f"osmodose: {path} row 6: has 7 fields where the header has 12",
        f"osmodose: {path} row 7: sodium: is required",
    ]
    rows = list(csv.DictReader(io.StringIO(out)))
    # One key per concept: `order_id` in the CSV as in the JSON (the orders file's column is `order-id`).
    assert [(r["row"], r["order_id"], r["status"]) for r in rows] == [
        ("2", "A1", "ok"),
        ("3", "A2", "error"),
        ("5", "A3", "error"),
        ("6", "", "error"),
        ("7", "A5", "error"),
        ("8", "A6", "warn"),
    ]
    first = rows[0]
    # glucose 180.16 mg/dL / 180.16 g/mol (IUPAC) = 10 mmol/L; 2 x 141 + 10 + 5 = 297 mOsm/kg.
    assert float(first["calculated_osmolality_mosm_kg"]) == pytest.approx(297.0)
    assert (float(first["volume_ml"]), float(first["volume_ml_per_kg"]), float(first["rate_ml_h"])) == (
        350.0,
        5.0,
        1050.0,
    )
    # 3 % saline (1027 mOsm/L) on a peripheral line is above the demo's 900 mOsm/L warn limit.
    assert rows[5]["findings"] == "peripheral-osmolarity:warn"
    assert rows[5]["messages"] == (
        "infusate osmolarity on a peripheral line 1027.0 mOsm/L is above the warn limit of 900 mOsm/L"
    )


@pytest.mark.parametrize(
    ("header", "cell"),
    [("dose", "1 g/kg"), ("dose", "1g/kg"), ("dose[g/kg]", "1"), ("dose,dose-unit", "1,g/kg")],
)
def test_a_dose_per_cell_in_the_header_or_in_a_unit_column_reads_the_same(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], header: str, cell: str
) -> None:
    # 1 g/kg x 70 kg = 70 g of 20 % mannitol (200 g/L) = 350 mL.
    # With a measured osmolality (295, inside every limit) so mannitol is judged on its dose alone.
    path = write(tmp_path, f"weight,age,sex,sodium,osmolality,agent,{header}\n70,45,male,141,295,mannitol-20,{cell}\n")
    code, out, _ = run(capsys, str(path), "--json")
    row = json.loads(out)["rows"][0]
    assert (code, row["status"], row["volume_ml"], row["solute_g_per_kg"]) == (0, "ok", 350.0, 1.0)


def test_header_units_convert_whole_columns(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    # 154.32358 lb x 0.45359237 kg/lb = 70 kg; BUN 14.006 mg/dL / 28.01 g/mol (N2) = 5.0004 mmol/L urea;
    # 5 L of 0.9 % saline is 5000 mL, the top of the plausible range (0.1 to 5000 mL).
    path = write(
        tmp_path,
        "weight[lb],age,sex,sodium[mEq/L],glucose,bun,osmolality[mmol/kg],agent,volume[L]\n"
        "154.32358,45,male,140,5.5,14.006,290,nacl-0.9,5\n",
    )
    code, out, _ = run(capsys, str(path), "--json")
    row = json.loads(out)["rows"][0]
    assert code == 0
    assert row["total_body_water_l"] == pytest.approx(0.6 * 70.0, rel=1e-6)
    assert row["volume_ml"] == 5000.0
    # measured 290 (mmol/kg read as mOsm/kg) - calculated (2 x 140 + 5.5 + 5.0004 = 290.5004) = -0.5004 mOsm/kg.
    assert row["osmolar_gap_mosm_kg"] == -0.5  # to 0.1 mOsm/kg


# A measured osmolality (295 mOsm/kg, inside every limit) on every row: mannitol with no osmolality at all
# would be warned (osmolality-unknown), which is not what these rows are about.
SUMMARY_ORDERS = (
    "weight,age,sex,sodium,osmolality,agent,dose,duration\n"
    "50,40,female,140,295,mannitol-20,0.5 g/kg,30\n"  # 25 g = 125 mL: ok
    "50,40,female,140,295,mannitol-20,1 g/kg,30\n"  # 1 g/kg: at the warn limit, not above: ok
    "50,40,female,140,295,mannitol-20,1.2 g/kg,30\n"  # above warn 1 g/kg: warn
    "50,40,female,140,295,mannitol-20,2 g/kg,30\n"  # above refuse 1.5 g/kg: refuse
    "50,40,female,158,295,mannitol-20,0.5 g/kg,30\n"  # sodium 158 above warn 155: warn
    "50,40,female,140,295,bicarb-8.4,1 mmol/kg,30\n"  # 50 mmol = 50 mL of 1000 mmol/L: ok
    "50,40,female,140,295,mannitol-20,abc,30\n"  # unreadable dose: bad row
)


def test_summary_counts_statuses_findings_and_doses(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    path = write(tmp_path, SUMMARY_ORDERS)
    code, out, err = run(capsys, str(path), "--summary", "--json")
    summary = json.loads(out)
    assert code == 1 and err.count("\n") == 1
    assert summary["rows"] == 7
    assert summary["status"] == {"error": 1, "ok": 3, "warn": 2, "refuse": 1}
    assert summary["findings"] == {"sodium-high": {"warn": 1, "refuse": 0}, "dose-per-kg": {"warn": 1, "refuse": 1}}
    assert summary["by_agent"]["mannitol-20"] == {
        "rows": 5,
        "ok": 2,
        "warn": 2,
        "refuse": 1,
        "findings": {"sodium-high": {"warn": 1, "refuse": 0}, "dose-per-kg": {"warn": 1, "refuse": 1}},
    }
    assert summary["by_agent"]["bicarb-8.4"] == {"rows": 1, "ok": 1, "warn": 0, "refuse": 0, "findings": {}}
    doses = {(d["agent"], d["unit"]): d for d in summary["dose_per_kg"]}
    # mannitol g/kg: 0.5, 0.5, 1, 1.2, 2 -> median 1; p90 by linear interpolation at rank 0.9 x 4 = 3.6:
    # 1.2 + 0.6 x (2 - 1.2) = 1.68.
    mannitol = doses[("mannitol-20", "g/kg")]
    assert (mannitol["n"], mannitol["min"], mannitol["median"], mannitol["max"]) == (5, 0.5, 1.0, 2.0)
    assert mannitol["p90"] == pytest.approx(1.68)
    # mL/kg is five times g/kg for 20 % (200 g/L): 2.5 ... 10.
    assert doses[("mannitol-20", "mL/kg")]["max"] == pytest.approx(10.0)
    assert doses[("bicarb-8.4", "mmol/kg")]["median"] == pytest.approx(1.0)
    assert ("mannitol-20", "mmol/kg") not in doses  # mannitol has no sodium


def test_summary_text_names_the_formulary_and_ends_with_the_caution(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = write(tmp_path, SUMMARY_ORDERS)
    _, out, _ = run(capsys, str(path), "--summary")
    lines = out.splitlines()
    assert lines[0] == f"osmodose audit of {path}"
    assert lines[1].startswith("formulary: Larkspur Point 7N neuro ICU (fictional demo unit) v2026-12-demo sha256 ")
    assert lines[3] == "rows: 7   ok 3   warn 2   refuse 1   not audited (bad rows) 1"
    assert lines[-1].startswith("Decision support only")


def test_out_writes_results_and_prints_a_tally(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    path = write(tmp_path, SUMMARY_ORDERS)
    for name in ("results.csv", "results.json"):
        target = tmp_path / name
        code, out, _ = run(capsys, str(path), "--out", str(target))
        assert code == 1
        assert out == f"7 rows: ok 3, warn 2, refuse 1, not audited 1; results in {target}\n"
        text = target.read_text(encoding="utf-8")
        rows = json.loads(text)["rows"] if name.endswith(".json") else list(csv.DictReader(io.StringIO(text)))
        assert [r["status"] for r in rows] == ["ok", "ok", "warn", "refuse", "warn", "ok", "error"]


def test_out_with_another_extension_is_refused(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    path = write(tmp_path, SUMMARY_ORDERS)
    assert run(capsys, str(path), "--out", "results.xlsx") == (
        2,
        "",
        "osmodose: out: results.xlsx has an extension osmodose cannot write (accepted: .csv or .json)\n",
    )


def test_progress_bar_only_when_asked_or_on_a_terminal(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    path = write(tmp_path, SUMMARY_ORDERS.replace("abc", "1 g/kg"))
    _, _, quiet = run(capsys, str(path), "--summary")
    assert quiet == ""
    _, _, shown = run(capsys, str(path), "--summary", "--progress")
    assert shown.startswith("\raudit [") and shown.endswith("100% 7 rows\n")


def test_out_that_is_the_orders_file_is_refused_and_the_orders_are_kept(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = write(tmp_path, SUMMARY_ORDERS)
    for out in (str(path), str(tmp_path / "." / "orders.csv")):  # the same file, however it is written
        for force in ((), ("--force",)):
            assert run(capsys, str(path), "--out", out, *force) == (
                2,
                "",
                f"osmodose: out: {out} is the orders file: the results would overwrite it (accepted: another file)\n",
            )
    assert path.read_text(encoding="utf-8") == SUMMARY_ORDERS


def test_out_over_an_existing_file_needs_force(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    path = write(tmp_path, SUMMARY_ORDERS)
    target = write(tmp_path, "last month's results\n", "results.csv")
    assert run(capsys, str(path), "--out", str(target)) == (
        2,
        "",
        f"osmodose: out: {target} already exists: choose another file or add --force to overwrite it\n",
    )
    assert target.read_text(encoding="utf-8") == "last month's results\n"
    code, out, _ = run(capsys, str(path), "--out", str(target), "--force")
    assert (code, out) == (1, f"7 rows: ok 3, warn 2, refuse 1, not audited 1; results in {target}\n")
    assert target.read_text(encoding="utf-8").startswith("row,status,reason,agent,")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["orders.csv", "results.csv"]


@pytest.mark.parametrize("name", ["results.csv", "results.json"])
def test_an_orders_file_unreadable_partway_leaves_no_results_file(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch, name: str
) -> None:
    # Orders on standard input, read a small block at a time: rows 2-41 are fine, line 42 is not UTF-8.
    from osmodose.audit import reader

    monkeypatch.setattr(reader, "BLOCK_BYTES", 64)
    data = ("weight,age,sex,sodium\n" + "70,40,male,140\n" * 40).encode() + "70,40,mäle,140\n".encode("latin-1")

    def stdin() -> io.TextIOWrapper:
        return io.TextIOWrapper(io.BytesIO(data))

    monkeypatch.setattr("sys.stdin", stdin())
    target = tmp_path / name
    expected = (
        "line 42 is not UTF-8 text (byte 0xe4): give the file's encoding with --encoding, e.g. --encoding latin-1"
    )
    assert run(capsys, "-", "--out", str(target)) == (2, "", f"osmodose: orders <stdin>: {expected}\n")
    assert list(tmp_path.iterdir()) == []  # nothing half-written, no leftovers
    old = write(tmp_path, "last month's results\n", name)
    monkeypatch.setattr("sys.stdin", stdin())
    assert run(capsys, "-", "--out", str(target), "--force")[0] == 2
    assert old.read_text(encoding="utf-8") == "last month's results\n"  # an older file stays as it was
    assert [p.name for p in tmp_path.iterdir()] == [name]


def test_an_infinite_cell_is_not_a_finite_number_as_in_check(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    # float() reads "1e999" as infinity; check refuses it in these words, and so does the audit.
    path = write(
        tmp_path,
        "weight,age,sex,sodium,volume[L],agent,dose\n"
        "1e999,40,male,140,,mannitol-20,1 g/kg\n"
        "70,40,male,140,-1e999,nacl-3,\n"
        "70,40,male,140,,mannitol-20,1e999 g/kg\n",
    )
    code, _, err = run(capsys, str(path), "--summary")
    assert code == 1
    assert err.splitlines() == [
        f"osmodose: {path} row 2: weight: 1e999 is not a finite number (accepted: a number in kg)",
        f"osmodose: {path} row 3: volume: -1e999 L is not a finite number (accepted: a number in mL)",
        f"osmodose: {path} row 4: dose: 1e999 g/kg is not a finite number (accepted: a number in g or mL or mmol "
        "or mOsm or g/kg or mL/kg or mmol/kg or mOsm/kg)",
    ]
