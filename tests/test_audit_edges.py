"""The audit's reader and writer at their edges: a bad cell is a bad row, never the end of the audit.

Patients and orders are invented.  Each case is one of the edges found by
trying the audit as a careful tester would: an over-long cell, an unclosed
quote, text that is not UTF-8, cells a spreadsheet would run as formulas,
orders from standard input or a pipe, and files that are no orders file.
"""

from __future__ import annotations

import csv
import io
import os
import subprocess
import sys
from pathlib import Path

import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from osmodose.audit import reader
from osmodose.cli.main import main
from tests.conftest import REPO_ROOT

HEAD = "order-id,weight,age,sex,sodium,agent,volume,line"
ROW = "{id},70,45,male,141,nacl-3,250,peripheral"


def write(tmp_path: Path, data: str | bytes, name: str = "orders.csv") -> Path:
    path = tmp_path / name
    path.write_bytes(data.encode("utf-8") if isinstance(data, str) else data)
    return path


def run(capsys: pytest.CaptureFixture[str], *args: str) -> tuple[int, str, str]:
    code = main(["audit", *args])
    out, err = capsys.readouterr()
    return code, out, err


def rows_of(out: str) -> list[dict[str, str]]:
    return list(csv.DictReader(io.StringIO(out)))


def orders(*ids: str) -> str:
    return "\n".join([HEAD, *(ROW.format(id=i) for i in ids)]) + "\n"


def test_a_cell_over_the_limit_is_a_bad_row_and_the_rows_after_it_are_audited(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch
) -> None:
    # Small blocks: rows before the long cell are written before it is read, as in a long file.
    monkeypatch.setattr(reader, "BLOCK_BYTES", 256)
    text = orders(*(f"A{i}" for i in range(1, 11))) + ROW.format(id="X" * 200_000) + "\n" + ROW.format(id="Z") + "\n"
    code, out, err = run(capsys, str(write(tmp_path, text)))
    assert code == 1
    rows = rows_of(out)
    assert [r["row"] for r in rows] == [str(n) for n in range(2, 14)]
    assert rows[10]["status"] == "error"
    assert rows[10]["reason"] == "order-id: has more than 131072 characters"
    assert rows[11]["order_id"] == "Z" and rows[11]["status"] == "warn"
    assert err.startswith(f"osmodose: {tmp_path / 'orders.csv'} row 12: order-id: has more than 131072 characters\n")


def test_an_unclosed_quote_is_a_bad_row_at_its_line_and_reading_goes_on(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    text = orders("A1") + '"A2,70,45,male,141,nacl-3,250,peripheral\n' + ROW.format(id="A3") + "\n"
    code, out, err = run(capsys, str(write(tmp_path, text)))
    assert code == 1
    rows = rows_of(out)
    assert [(r["row"], r["status"]) for r in rows] == [("2", "warn"), ("3", "error"), ("4", "warn")]
    assert rows[1]["reason"] == 'has a quote (") that is never closed'
    assert rows[2]["order_id"] == "A3"
    assert err.startswith(f'osmodose: {tmp_path / "orders.csv"} row 3: has a quote (") that is never closed\n')


def test_an_unclosed_quote_that_runs_past_the_longest_row_is_a_bad_row_at_its_line(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setattr(reader, "BLOCK_BYTES", 256)
    monkeypatch.setattr(reader, "MAX_RECORD_BYTES", 1024)
    text = (
        orders("A1")
        + '"A2,70,45,male,141,nacl-3,250,peripheral\n'
        + orders(*(f"B{i}" for i in range(60)))[len(HEAD) + 1 :]
    )
    code, out, _ = run(capsys, str(write(tmp_path, text)))
    rows = rows_of(out)
    assert code == 1
    assert (rows[1]["row"], rows[1]["reason"]) == ("3", 'has a quote (") that is never closed')
    assert [r["order_id"] for r in rows[2:]] == [f"B{i}" for i in range(60)]
    assert all(r["status"] == "warn" for r in rows[2:])


def test_text_that_is_not_utf8_stops_the_audit_naming_its_line_before_any_row(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    path = write(tmp_path, orders("A1", "A2").encode() + "Müller-3,70,45,male,141,,,\n".encode("latin-1"))
    code, out, err = run(capsys, str(path))
    assert (code, out) == (2, "")
    assert err == (
        f"osmodose: orders {path}: line 4 is not UTF-8 text (byte 0xfc): give the file's encoding with "
        "--encoding, e.g. --encoding latin-1\n"
    )


def test_a_declared_encoding_reads_the_file_in_it(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    path = write(tmp_path, (HEAD + "\n" + ROW.format(id="Müller-3") + "\n").encode("latin-1"))
    code, out, _ = run(capsys, str(path), "--encoding", "latin-1")
    assert code == 0
    assert rows_of(out)[0]["order_id"] == "Müller-3"


def test_an_unknown_encoding_is_an_input_error(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    code, out, err = run(capsys, str(write(tmp_path, orders("A1"))), "--encoding", "klingon")
    assert (code, out) == (2, "")
    assert (
        err == "osmodose: encoding: klingon is not an encoding osmodose knows (accepted: e.g. utf-8, latin-1, cp1252)\n"
    )


@pytest.mark.parametrize("cell", ["=1+1", "+A1", "-5", "@SUM(A1)"])
def test_text_cells_a_spreadsheet_would_run_as_formulas_are_written_after_a_quote_mark(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], cell: str
) -> None:
    # OWASP's CSV injection advice: prefix such cells with ' so a spreadsheet shows them as text.
    text = HEAD + "\n" + f"{cell},70,45,male,141,{cell},250,peripheral\n"
    code, out, _ = run(capsys, str(write(tmp_path, text)))
    assert code == 1  # the agent is unknown
    row = rows_of(out)[0]
    assert row["order_id"] == "'" + cell
    assert row["agent"] == "'" + cell
    assert row["projected_sodium_mmol_l"] == ""  # figures are numbers, never prefixed


def test_negative_figures_are_not_prefixed(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    # 5 % glucose lowers sodium: the projected change is negative, and stays a number.
    text = "weight,age,sex,sodium,agent,target-rise\n70,45,male,150,glucose-5,-4\n"
    code, out, _ = run(capsys, str(write(tmp_path, text)))
    assert code in (0, 1)
    assert rows_of(out)[0]["projected_sodium_rise_mmol_l"].startswith("-")


def test_orders_read_from_standard_input_give_what_the_file_gives(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch
) -> None:
    text = orders("A1", "A2") + "A3,4000,45,male,141,nacl-3,250,peripheral\n"
    from_file = run(capsys, str(write(tmp_path, text)))
    monkeypatch.setattr(sys, "stdin", io.TextIOWrapper(io.BytesIO(text.encode())))
    from_stdin = run(capsys, "-")
    assert from_stdin[:2] == from_file[:2]
    assert from_stdin[2] == from_file[2].replace(str(tmp_path / "orders.csv"), "<stdin>")


def test_orders_piped_to_a_process_are_read(tmp_path: Path) -> None:
    path = write(tmp_path, orders("A1", "A2"))
    env = dict(os.environ, PYTHONPATH=str(REPO_ROOT))
    with open(path, "rb") as handle:
        done = subprocess.run(
            [sys.executable, "-m", "osmodose", "audit", "-"], stdin=handle, capture_output=True, env=env, check=False
        )
    assert done.returncode == 0, done.stderr
    assert [r["order_id"] for r in rows_of(done.stdout.decode())] == ["A1", "A2"]


def test_a_fifo_is_refused_before_it_is_read(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    fifo = tmp_path / "orders.csv"
    os.mkfifo(fifo)
    code, out, err = run(capsys, str(fifo))
    assert (code, out) == (2, "")
    assert err == (
        f"osmodose: orders {fifo}: is not a regular file (to read from a pipe, give - and pipe it to stdin)\n"
    )


def test_a_device_is_refused(capsys: pytest.CaptureFixture[str]) -> None:
    code, _, err = run(capsys, "/dev/zero")
    assert code == 2
    assert "is not a regular file" in err


def test_a_file_over_the_size_limit_is_refused(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setattr(reader, "MAX_FILE_BYTES", 100)
    path = write(tmp_path, orders("A1", "A2", "A3"))
    code, out, err = run(capsys, str(path))
    assert (code, out) == (2, "")
    assert err == f"osmodose: orders {path}: is larger than an orders file may be (100 bytes)\n"


def test_standard_input_over_the_size_limit_stops_with_one_line(
    capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setattr(reader, "MAX_FILE_BYTES", 100)
    monkeypatch.setattr(sys, "stdin", io.TextIOWrapper(io.BytesIO(orders("A1", "A2", "A3").encode())))
    code, _, err = run(capsys, "-", "--summary")
    assert code == 2
    assert err == "osmodose: orders <stdin>: is larger than an orders file may be (100 bytes)\n"


def test_non_utf8_on_standard_input_partway_leaves_no_results_file(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setattr(reader, "BLOCK_BYTES", 128)
    data = orders(*(f"A{i}" for i in range(20))).encode() + "Müller,70,45,male,141,,,\n".encode("latin-1")
    monkeypatch.setattr(sys, "stdin", io.TextIOWrapper(io.BytesIO(data)))
    target = tmp_path / "results.csv"
    code, out, err = run(capsys, "-", "--out", str(target))
    assert (code, out) == (2, "")
    assert err.endswith("line 22 is not UTF-8 text (byte 0xfc): give the file's encoding with --encoding, "
                        "e.g. --encoding latin-1\n")  # fmt: skip
    assert list(tmp_path.iterdir()) == []


def test_blank_and_space_only_lines_and_crlf_endings_keep_the_files_line_numbers(
    tmp_path: Path, capsys: pytest.CaptureFixture[str]
) -> None:
    text = HEAD + "\r\n" + ROW.format(id="A1") + "\r\n\r\n   \r\n" + ROW.format(id="A2") + "\r\n"
    code, out, _ = run(capsys, str(write(tmp_path, text)))
    assert code == 0
    assert [(r["row"], r["order_id"]) for r in rows_of(out)] == [("2", "A1"), ("5", "A2")]


def test_a_parquet_export_gives_the_figures_of_the_same_csv(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    text = orders("A1", "A2") + "A3,4000,45,male,141,nacl-3,250,peripheral\n"
    _, from_csv, _ = run(capsys, str(write(tmp_path, text)))
    table = pa.table(
        {
            "order-id": ["A1", "A2", "A3"],
            "weight": [70.0, 70.0, 4000.0],
            "age": [45, 45, 45],
            "sex": ["male"] * 3,
            "sodium": [141.0] * 3,
            "agent": ["nacl-3"] * 3,
            "volume": [250.0, 250.0, 250.0],
            "line": ["peripheral"] * 3,
        }
    )
    pq.write_table(table, tmp_path / "orders.parquet")
    code, from_parquet, err = run(capsys, str(tmp_path / "orders.parquet"))
    assert code == 1
    csv_rows, parquet_rows = rows_of(from_csv), rows_of(from_parquet)
    assert [r["row"] for r in parquet_rows] == ["1", "2", "3"]  # records, counted from 1
    for a, b in zip(csv_rows, parquet_rows, strict=True):
        a.pop("row"), b.pop("row")
        assert a == b
    assert err.startswith(f"osmodose: {tmp_path / 'orders.parquet'} row 3: weight: 4000 is outside")


class _FullDisk(io.BytesIO):
    """A stream that takes the header, then fails like a full disk."""

    def write(self, data: object) -> int:
        if self.tell() > 0:
            raise OSError(28, "No space left on device")
        return super().write(data)  # type: ignore[arg-type]


def test_an_error_writing_results_on_the_writer_thread_reaches_the_caller(tmp_path: Path) -> None:
    from osmodose.audit.output import CsvResults
    from osmodose.audit.run import run_audit
    from osmodose.formulary import demo_formulary_path, load_formulary

    path = write(tmp_path, orders(*(f"A{i}" for i in range(10))))
    with pytest.raises(OSError, match="No space left"):
        run_audit(path, load_formulary(demo_formulary_path()), [CsvResults(_FullDisk(), True)], chunk_rows=2)


@pytest.mark.parametrize("block", [7, 64, 1 << 20])
def test_utf8_characters_cut_by_a_block_end_are_read_whole(
    tmp_path: Path, capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch, block: int
) -> None:
    monkeypatch.setattr(reader, "BLOCK_BYTES", block)
    ids = [f"Müller-€-{i}" for i in range(30)]
    code, out, err = run(capsys, str(write(tmp_path, orders(*ids))))
    assert (code, err) == (0, "")
    assert [r["order_id"] for r in rows_of(out)] == ids
