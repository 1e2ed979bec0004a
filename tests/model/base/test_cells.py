"""The one neutralising writer: formula starts after spaces, and the exact way back."""

from __future__ import annotations

import csv
import io

import pandas as pd
import pytest
from hypothesis import given
from hypothesis import strategies as st

from model.base.cells import FORMULA_STARTS, csv_text, neutralise, unneutralise

# A spreadsheet program drops leading spaces and no-break spaces before it reads a formula
# (OWASP "CSV Injection": = + - @ tab CR; common practice, no source for the spaces).
AFTER_SPACES = [
    ' =HYPERLINK("http://example.invalid","x")',
    "   +1+1",
    "\u00a0=1+1",
    "\u00a0 @SUM(A1:A2)",
    "\u2007-2+3",
    "\u3000=1",
    "\n=1+1",
    "\u200b=1+1",
    "\ufeff=1+1",
]


@pytest.mark.parametrize("text", AFTER_SPACES)
def test_a_formula_start_after_leading_spaces_is_neutralised(text):
    assert neutralise(text) == "'" + text
    rows = list(csv.reader(io.StringIO(csv_text(pd.DataFrame({"name": [text]})), newline="")))
    assert rows[1] == ["'" + text]


@pytest.mark.parametrize("text", ["plain", "a=b", "1.5", "", " x", "'quoted", "\u00a0name"])
def test_text_without_a_formula_start_is_written_as_it_is(text):
    assert neutralise(text) == text and unneutralise(text) == text


def _runs_as_formula(text: str) -> bool:
    """What a spreadsheet may run: a formula start, at once or after leading white space."""
    return text.lstrip("".join(chr(c) for c in range(0x3001) if chr(c).isspace()) + "\u200b\ufeff").startswith(
        FORMULA_STARTS
    ) or text.startswith(FORMULA_STARTS)


@given(st.text(alphabet=st.sampled_from(list("=+-@\t\r \u00a0\u2007'\u200bab1")), max_size=12))
def test_no_neutralised_cell_runs_and_reading_it_back_gives_the_text(text):
    out = neutralise(text)
    assert not _runs_as_formula(out)
    assert unneutralise(out) == text


def test_a_carriage_return_in_a_cell_with_lf_line_ends_stays_inside_its_row():
    # Python's csv module (and spreadsheets) end a line at CR as at LF: a bare CR inside an
    # unquoted cell would start a new row whose first cell is "=" and runs as a formula.
    text = csv_text(pd.DataFrame({"site": ["\r=1+1", "plain"], "n": [1, 2]}), lineterminator="\n")
    rows = list(csv.reader(io.StringIO(text, newline="")))
    assert rows == [["site", "n"], ["'\r=1+1", "1"], ["plain", "2"]]
