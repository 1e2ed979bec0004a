"""Exports: formula cells neutralised, numbers kept, HTML escaped and self-contained."""

from __future__ import annotations

import csv
import io
import re
from pathlib import Path

import openpyxl
import pandas as pd
import plotly.graph_objects as go
import pytest
from hypothesis import given
from hypothesis import strategies as st

from model import compute_case, load_plan
from model.present.exports import FORMULA_STARTS, chart_text, html_export, neutralise, to_csv, to_xlsx

DEMO = Path(__file__).resolve().parents[3] / "demo_data" / "plans"

# Cell texts a spreadsheet program would run as formulas (OWASP "CSV injection" examples,
# common practice, no source).
HOSTILE = [
    '=HYPERLINK("http://example.invalid","x")',
    "+1+1",
    "-2+3",
    "@SUM(A1:A2)",
    "\tindented",
    "\rreturn",
    "=cmd|' /C calc'!A0",
]
HOSTILE_HTML = "<script>alert('plan')</script><img src=x onerror=alert(1)>"


def frame():
    return pd.DataFrame(
        {"phase": HOSTILE, "liquid_ml": [1.5, -2.25, 0.0, 3.0, -4.0, 5.0, 6.0], "count": [1, -2, 3, 4, 5, 6, 7]}
    )


def test_csv_text_cells_neutralised_numbers_kept():
    rows = list(csv.reader(io.StringIO(to_csv(frame()).decode("utf-8"), newline="")))
    assert rows[0] == ["phase", "liquid_ml", "count"]
    for text, row in zip(HOSTILE, rows[1:], strict=False):
        assert row[0] == "'" + text
    assert [float(r[1]) for r in rows[1:]] == [1.5, -2.25, 0.0, 3.0, -4.0, 5.0, 6.0]
    assert [int(r[2]) for r in rows[1:]] == [1, -2, 3, 4, 5, 6, 7]


def test_xlsx_text_cells_are_text_and_numbers_are_numbers():
    data = to_xlsx({"Phases": frame(), "=bad/name?": frame()}, notes=["=1+1 note"])
    wb = openpyxl.load_workbook(io.BytesIO(data))
    for ws in wb.worksheets[:2]:
        for i, text in enumerate(HOSTILE, start=2):
            cell = ws.cell(i, 1)
            # XML turns a carriage return into a line feed (XML 1.0, section 2.11).
            assert cell.data_type == "s" and cell.value == ("'" + text).replace("\r", "\n")
            assert ws.cell(i, 2).data_type == "n" and isinstance(ws.cell(i, 2).value, (int, float))
        assert ws.cell(3, 2).value == -2.25 and ws.cell(3, 3).value == -2
    assert wb["Notes"]["A1"].value == "'=1+1 note"
    assert not any(c.data_type == "f" for ws in wb.worksheets for row in ws.iter_rows() for c in row)


@given(st.text(max_size=40))
def test_neutralised_text_never_starts_with_a_formula_character(text):
    out = neutralise(text)
    assert not out.startswith(FORMULA_STARTS)
    assert out.endswith(text)


@given(st.one_of(st.integers(), st.floats(allow_nan=False), st.booleans(), st.none()))
def test_neutralise_leaves_non_text_unchanged(value):
    assert neutralise(value) is value


def test_exports_of_a_plan_with_hostile_names():
    plan = load_plan(DEMO / "lap_chole_low_flow.toml")
    from dataclasses import replace

    plan = replace(plan, name="=HYPERLINK(1)", phases=tuple(replace(p, name="@" + p.name) for p in plan.phases))
    result = compute_case(plan)
    table = result.phases.assign(plan=plan.name)
    wb = openpyxl.load_workbook(io.BytesIO(to_xlsx({"Phases": table})))
    ws = wb.active
    header = [c.value for c in ws[1]]
    liquid = header.index("liquid_agent_ml") + 1
    # Numbers stay numbers: the exported liquid volume matches the model to rounding.
    assert ws.cell(3, liquid).value == pytest.approx(result.phases["liquid_agent_ml"][1])
    assert ws.cell(2, 1).value == "'@induction"
    assert ws.cell(2, header.index("plan") + 1).value == "'=HYPERLINK(1)"


def test_html_report_escapes_user_text_and_is_self_contained():
    fig = go.Figure(go.Bar(x=[chart_text(HOSTILE_HTML)], y=[1]), layout_title_text=chart_text(HOSTILE_HTML))
    doc = html_export(
        HOSTILE_HTML,
        inputs={"plan name": HOSTILE_HTML},
        tables={HOSTILE_HTML: pd.DataFrame({"phase": [HOSTILE_HTML], "x": [1.0]})},
        figures=[(HOSTILE_HTML, fig)],
        warnings=[HOSTILE_HTML],
        cautions=["Caution text"],
        sources=pd.DataFrame({"source": [HOSTILE_HTML]}),
    )
    assert "<script>alert" not in doc and "<img src=x" not in doc
    assert "&lt;script&gt;alert(&#x27;plan&#x27;)&lt;/script&gt;" in doc
    # Nothing is fetched when the report opens: no external scripts, styles or images.
    assert not re.search(r"<(script|link|img|iframe)[^>]+(src|href)\s*=\s*['\"]?https?:", doc, re.I)
    assert not re.search(r"<script[^>]+src\s*=", doc, re.I)
    # plotly.js itself is inlined once (it is several hundred kB).
    assert len(doc) > 500_000 and doc.count("plotly.js v") >= 1
    assert "Caution text" in doc


def test_a_workbook_with_control_characters_in_names_is_written_with_them_shown():
    # XML 1.0 (section 2.2) cannot hold C0 controls but tab and line breaks: openpyxl refuses
    # them, which failed the whole download.
    df = pd.DataFrame({"phase": ["induc\x1b[31mtion", "\x07=1+1"], "n": [1, 2]})
    wb = openpyxl.load_workbook(io.BytesIO(to_xlsx({"Plan \x1b": df}, notes=["note\x00"])))
    ws = wb.worksheets[0]
    assert [ws.cell(2, 1).value, ws.cell(3, 1).value] == ["induc\\x1b[31mtion", "\\x07=1+1"]
    assert wb["Notes"]["A1"].value == "note\\x00"


def test_csv_writes_an_infinite_or_missing_figure_as_an_empty_cell():
    # RFC 4180 has no infinity; pandas would write "inf". The workbook leaves such cells empty.
    df = pd.DataFrame({"what": ["a", "b", "c", "d"], "kg": [1.5, float("inf"), float("-inf"), float("nan")]})
    text = to_csv(df).decode("utf-8")
    assert "inf" not in text.lower() and "nan" not in text.lower()
    rows = list(csv.reader(io.StringIO(text, newline="")))
    assert [r[1] for r in rows[1:]] == ["1.5", "", "", ""]
    ws = openpyxl.load_workbook(io.BytesIO(to_xlsx({"t": df}))).worksheets[0]
    assert [ws.cell(i, 2).value for i in range(2, 6)] == [1.5, None, None, None]
