"""Fuzzed cells: formula starts after leading spaces and control characters in names.

Invariants, for every CSV and workbook the program writes (table CSV, workbook, case mix,
purchases): no exception; no cell that a spreadsheet would run as a formula (checked by
``cell_runs_as_formula`` of tests/helpers/fuzz.py, written apart from the model's check);
the program's own readers give the names back.
"""

from __future__ import annotations

import csv
import io
from dataclasses import replace
from pathlib import Path

import openpyxl
import pandas as pd
from hypothesis import given, settings
from hypothesis import strategies as st

from model.io.case_mix import case_mix_to_csv, load_case_mix, parse_case_mix_text
from model.present.exports import to_csv, to_xlsx
from tests.helpers.fuzz import FUZZ, SLOW, cell_runs_as_formula, formula_cells, names_with_controls

YEAR = Path(__file__).resolve().parents[3] / "demo_data" / "year"
CELLS = st.one_of(formula_cells(), names_with_controls(), st.text(max_size=20))


def _csv_cells(text: str) -> list[str]:
    return [cell for row in csv.reader(io.StringIO(text, newline="")) for cell in row]


@settings(FUZZ, max_examples=300)
@given(st.lists(CELLS, min_size=1, max_size=5), CELLS)
def test_no_csv_cell_runs_as_a_formula(cells, header):
    df = pd.DataFrame({header or "x": cells, "n": range(len(cells))})
    for cell in _csv_cells(to_csv(df).decode("utf-8")):
        assert not cell_runs_as_formula(cell), cell


@settings(SLOW, max_examples=60)
@given(st.lists(CELLS, min_size=1, max_size=4), CELLS, st.lists(CELLS, max_size=2))
def test_no_workbook_cell_runs_as_a_formula_and_controls_never_fail_it(cells, sheet, notes):
    df = pd.DataFrame({"name": cells, "n": range(len(cells))})
    wb = openpyxl.load_workbook(io.BytesIO(to_xlsx({sheet or "s": df}, notes=notes)))
    for ws in wb.worksheets:
        for row in ws.iter_rows():
            for cell in row:
                assert cell.data_type != "f"
                if isinstance(cell.value, str):
                    assert not cell_runs_as_formula(cell.value), cell.value


@settings(SLOW, max_examples=25)
# Line breaks inside a name are left out: the case-mix file is written with LF line ends,
# so a carriage return in a name is not quoted (a reader matter, not a formula one).
@given(formula_cells().map(lambda t: t.strip()[:100]).filter(lambda t: t and not set(t) & set("\r\n")))
def test_a_case_mix_with_formula_names_is_written_neutralised_and_read_back(name):
    mix = load_case_mix(YEAR / "fernhollow_casemix.csv")
    hostile = replace(mix, types=(replace(mix.types[0], name=name), *mix.types[1:]))
    text = case_mix_to_csv(hostile)
    for cell in _csv_cells(text):
        assert not cell_runs_as_formula(cell), cell
    again = parse_case_mix_text(text, "mix.csv", lambda n, w: mix.plans[n])
    assert again.types[0].name == name.strip()
