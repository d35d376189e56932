"""Reading orders files: row numbers are the file's lines, chunks do not change results."""

from __future__ import annotations

from pathlib import Path

from osmodose.audit.reader import open_orders
from tests.test_audit_matches_check import audit_rows


def test_row_numbers_are_file_lines_with_blank_lines_and_quoted_newlines(tmp_path: Path) -> None:
    path = tmp_path / "orders.csv"
    text = 'order-id,weight,age,sex,sodium\n"A\nB",70,40,male,140\n\nC,70,40,male,140\n'
    path.write_text("\ufeff" + text, encoding="utf-8")  # a byte-order mark, as spreadsheets write
    with open_orders(path) as orders:
        assert list(orders.header.columns) == ["order-id", "weight", "age", "sex", "sodium"]
        chunks = list(orders.chunks(1))
    assert [c.lines.tolist() for c in chunks] == [[2], [5]]  # "A\nB" starts on line 2; line 4 is blank
    assert list(chunks[0].cells["order-id"]) == ["A\nB"]


def test_chunk_size_does_not_change_any_row() -> None:
    header = ["weight", "age", "sex", "sodium", "agent", "volume", "line"]
    rows = [
        ["70", "40", "male", "140", "nacl-3", "250", "peripheral"],
        ["7000", "40", "male", "140", "nacl-3", "250", ""],  # bad: weight
        ["60", "70", "female", "150", "nacl-23.4", "30", "peripheral"],
        ["80", "30", "male", "120", "nacl-3", "500", "central"],
    ]
    assert audit_rows(header, rows, chunk_rows=1) == audit_rows(header, rows, chunk_rows=50_000)
