"""The audit's CSV cells, made on whole columns, are the text Python's own writers give cell by cell.

Figures: `repr` (Python's shortest round-trip text) of each figure rounded to its decimals, found by table
lookup (`RoundedText`).  Text: the standard library's csv writer with minimal quoting, after the ' that keeps
a spreadsheet from running a formula.  The references are the standard library itself.
"""

from __future__ import annotations

import csv
import io

import numpy as np
import pyarrow as pa
from hypothesis import given, settings
from hypothesis import strategies as st

from osmodose.audit.csv_cells import RoundedText, csv_text
from osmodose.science.precision import rounded


@settings(max_examples=200, deadline=None)
@given(
    decimals=st.integers(0, 4),
    values=st.lists(
        st.one_of(
            st.floats(-5000, 5000),
            st.floats(allow_nan=True, allow_infinity=True),
            st.sampled_from([0.0, -0.0, 0.05, 2.675, 1e15, 4.5e15, -1e-7, 5e-5]),
        ),
        max_size=60,
    ),
)
def test_figures_are_written_as_repr_writes_them(decimals: int, values: list[float]) -> None:
    with np.errstate(all="ignore"):  # rounding a huge float overflows on the way (numpy's rule)
        figures = rounded(np.asarray(values, dtype=float), decimals)
    text = RoundedText(decimals)
    for _ in range(2):  # the table grows on the first column and is reused on the second
        got = text.column(figures).to_pylist()
        assert got == [None if np.isnan(v) else repr(v) for v in figures.tolist()]


def test_a_table_far_from_zero_and_a_few_outliers_still_give_repr() -> None:
    text = RoundedText(1)
    figures = rounded(np.array([1e9 + 0.1, 1e9 + 0.2, -3.5, 29336.9, 1e14, np.nan]), 1)
    assert text.column(figures).to_pylist() == [
        "1000000000.1",
        "1000000000.2",
        "-3.5",
        "29336.9",
        "100000000000000.0",
        None,
    ]


@settings(max_examples=200, deadline=None)
@given(st.lists(st.text(alphabet=st.sampled_from(list("ab ,\"\r\n=+-@'é")), max_size=8), max_size=20))
def test_text_cells_are_quoted_as_the_csv_module_quotes_them(cells: list[str]) -> None:
    def expected(cell: str) -> str:
        safe = "'" + cell if cell[:1] in ("=", "+", "-", "@") else cell
        out = io.StringIO()
        csv.writer(out, quoting=csv.QUOTE_MINIMAL).writerow([safe])  # its line end is "\r\n": CR and LF quoted
        # A lone empty cell is written "" by the csv module as a whole row; as one cell of many it is empty.
        return "" if safe == "" else out.getvalue().removesuffix("\r\n")

    assert csv_text(pa.array(cells, pa.string())).to_pylist() == [expected(c) for c in cells]
