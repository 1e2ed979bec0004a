"""Numbers and names for people on every page and in every export.

Defect 7 of issue 12: pages and exports showed snake_case column names and raw floats
(23.799988848217595, a dial of 5.999999999999997, "Cases 3080.00", "ar6_gwp100").
"""

from __future__ import annotations

import math
import re

import numpy as np
import pandas as pd
import pytest

from model import DEFAULT_REFERENCE, load_plan
from model.case import compute_case
from model.io.scenario import load_scenario
from model.present.exports import html_export, to_csv
from model.present.readable import decimals, is_money, number_text, readable_frame
from model.reference import GWP_SOURCES
from model.year.result import compute_year
from tests.helpers import ROOT
from tests.helpers.pages import page

SNAKE = re.compile(r"^[a-z0-9]+(_[a-z0-9]+)+$")
PAGES = ("case_plan.py", "compare.py", "department_year.py", "record_audit.py")


def _is_rounded(v: float, money: bool = False) -> bool:
    return not math.isfinite(v) or abs(v - round(v, decimals(v, money))) <= 1e-9 * max(1.0, abs(v))


def _check_frame(df: pd.DataFrame, where: str) -> None:
    snake = [c for c in df.columns if SNAKE.match(str(c))]
    assert not snake, (where, snake)
    for col in df.columns:
        if pd.api.types.is_float_dtype(df[col]):
            raw = [v for v in df[col].dropna() if not _is_rounded(float(v), is_money(col))]
            assert not raw, (where, col, raw[:3])
        elif df[col].dtype == object or pd.api.types.is_string_dtype(df[col]):
            # Cells of the program's own words (not names from the user's files) are words too.
            ours = str(col) in ("problem", "item", "agent", "basis", "where it went", "flow band")
            keys = [v for v in df[col].dropna().astype(str) if v in GWP_SOURCES or (ours and SNAKE.match(v))]
            assert not keys, (where, col, keys[:3])


@pytest.mark.parametrize("name", PAGES)
def test_page_tables_have_headings_in_words_and_rounded_figures(name):
    """Defect 7: every table on the page is written for people.

    Headings in words (units in brackets), figures to sensible significant figures, and no
    machine keys (snake_case, GWP source keys) in cells.
    """
    at = page(name)
    assert at.dataframe, name
    for i, df in enumerate(at.dataframe):
        if df.proto.editing_mode == 0:  # result tables; editors hold a file format's columns
            _check_frame(df.value, f"{name} table {i}")
    shown = " ".join(str(e.value) for kind in ("caption", "markdown", "info", "warning") for e in at.get(kind))
    assert not any(k in shown for k in GWP_SOURCES if k != "user"), shown


def test_case_plan_flow_sweep_and_phases_are_readable():
    """Defect 7: the case plan's sweep table (machine columns until now) and phases table."""
    at = page("case_plan.py")
    headings = set()
    for tab in ("Flow sweep", "Phases"):
        at.session_state["cp_tab"] = tab
        at.run()
        headings |= {c for df in at.dataframe for c in df.value.columns}
    assert "fresh gas flow (L/min)" in headings and "CO2e, total (kg)" in headings
    assert any(h.startswith("cost, total (") for h in headings)


def test_figures_for_people_follow_significant_figures():
    # Common practice, no source: four significant figures, thousands separated; counts whole.
    assert number_text(23.799988848217595) == "23.8"
    assert number_text(5.999999999999997) == "6"
    assert number_text(3080.0) == "3,080"
    assert number_text(67767.77) == "67,768"
    assert number_text(0.006930618) == "0.00693"
    assert number_text(12.3195, money=True) == "12.32"
    assert number_text(-0.0001, money=True) == "0.00"


def test_year_report_and_exports_show_cases_as_a_count_and_sources_by_label():
    """Defect 7: "Cases 3080.00" in the year report; snake_case headings in CSV and Excel."""
    year = compute_year(load_scenario(ROOT / "demo_data" / "year" / "baseline_2l.toml"), DEFAULT_REFERENCE)
    summary = year.summary.drop(columns=["key"])
    doc = html_export("Year", tables={"Headline figures": summary, "Per case type": year.by_type}, currency="GBP")
    cases_row = re.search(r"<td>Cases</td><td>cases</td><td class='num'>([^<]*)</td>", doc)
    assert cases_row and cases_row.group(1) == "3,080", cases_row
    assert "3080.00" not in doc and "<th>deterministic</th>" not in doc and "<th>liquid_ml" not in doc
    assert "<th>expected</th>" in doc and "<th>cost, pro rata (GBP)</th>" in doc
    csv = to_csv(readable_frame(year.monthly, "GBP")).decode()
    header = csv.splitlines()[0].split(",")
    assert not [h for h in header if SNAKE.match(h)], header
    assert "Sevoflurane bottles" in header
    for note in year.notes:
        assert not any(k in note for k in GWP_SOURCES if k != "user"), note


def test_case_phases_export_rounds_the_dial_found_for_a_target():
    """Defect 7: a target phase's dial came out as 5.999999999999997 in exports."""
    plan = load_plan(ROOT / "demo_data" / "year" / "plans" / "adult_target_2l.toml")
    phases = readable_frame(compute_case(plan, DEFAULT_REFERENCE).phases, "GBP")
    _check_frame(phases, "phases export")
    assert "vaporizer dial (%)" in phases.columns
    dial = phases["vaporizer dial (%)"].dropna().to_numpy(dtype=float)
    assert np.all([_is_rounded(v) for v in dial])


def test_reference_values_stay_exact_in_exports_while_results_are_rounded():
    """Defect 7: rounding is for results; a sourced value (molar mass 200.05 g/mol) is shown whole."""
    ref = pd.DataFrame(DEFAULT_REFERENCE.table())
    shown = readable_frame(ref)
    # Source: IUPAC standard atomic weights - sevoflurane C4H3F7O is 200.05 g/mol.
    assert 200.05 in set(shown["value"])
    at = page("reference.py")
    table = at.dataframe[0].value
    assert "source of the default" in table.columns and "degC" not in set(table["unit"])
