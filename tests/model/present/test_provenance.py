"""The one provenance block: the same rows in CSV, Excel and HTML exports."""

from __future__ import annotations

import hashlib
import html
import io
import re
from datetime import UTC, datetime

import pandas as pd
from openpyxl import load_workbook

from model.present.exports import FORMULA_STARTS, NEUTRAL_PREFIX, html_export, to_csv, to_xlsx
from model.present.provenance import HEADING, input_file, program_version, provenance


def _block():
    return provenance(
        "Case plan: test",
        unsafe=True,
        lowest_inspired_o2_pct=4.04,
        hazards=["maintenance: predicted inspired O2 falls to 4 %"],
        files=[input_file("plan", "plan.toml", b"name = 'x'\n", 3, "phases")],
        prices="built-in invented example prices",
        gwp_source="IPCC AR6 GWP100, chosen in the sidebar",
        settings={"room temperature": "20 °C"},
        made_at=datetime(2026, 12, 4, 21, 30, tzinfo=UTC),
    )


def _text(value: str) -> str:
    """A cell as written before a spreadsheet's formula guard (a leading apostrophe) was added."""
    return value[1:] if value.startswith(NEUTRAL_PREFIX) and value[1:].startswith(FORMULA_STARTS) else value


def csv_block(data: bytes) -> list[tuple[str, str]]:
    """The (name, value) rows of a CSV export's block (the lines beginning with '#')."""
    import csv

    rows = [r for r in csv.reader(io.StringIO(data.decode("utf-8"))) if r and r[0].startswith("#")]
    return [(r[0][2:], _text(r[1])) for r in rows[1:]]


def xlsx_block(data: bytes) -> list[tuple[str, str]]:
    """The rows of a workbook's first sheet, "About this file", read back with openpyxl."""
    wb = load_workbook(io.BytesIO(data))
    ws = wb.worksheets[0]
    assert ws.title == HEADING
    return [(str(a), _text(str(b))) for a, b in ws.iter_rows(min_row=2, values_only=True)]


def html_block(text: str) -> list[tuple[str, str]]:
    """The rows of an HTML export's block (its section id='provenance')."""
    section = re.search(r"<section id='provenance'>(.*?)</section>", text, re.S).group(1)
    pairs = re.findall(r"<th scope='row'>(.*?)</th><td>(.*?)</td>", section, re.S)
    return [(html.unescape(a), html.unescape(b)) for a, b in pairs]


def test_csv_xlsx_and_html_carry_the_same_block_with_safety_first():
    prov = _block()
    table = pd.DataFrame({"figure": ["Liquid agent"], "value": [12.5]})
    rows = prov.rows()
    assert csv_block(to_csv(table, prov)) == rows
    assert xlsx_block(to_xlsx({"Summary": table}, provenance=prov)) == rows
    assert html_block(html_export("Case plan: test", tables={"Summary": table}, provenance=prov)) == rows
    assert rows[0] == ("safety", "UNSAFE PRACTICE: maintenance: predicted inspired O2 falls to 4 %")
    assert rows[1] == ("lowest predicted inspired O2", "4.0 %")
    values = dict(rows)
    assert values["program"] == f"Fresh Gas Ledger {program_version()}"
    assert values["made"] == "4 Dec 2026, 21:30 UTC"
    # Source: FIPS 180-4 (SHA-256), as Python's hashlib computes it.
    digest = hashlib.sha256(b"name = 'x'\n").hexdigest()
    assert values["input: plan"] == f"plan.toml (3 phases; SHA-256 {digest})"
    assert values["prices in use"] == "built-in invented example prices"


def test_the_table_still_reads_back_after_the_block():
    prov = _block()
    table = pd.DataFrame({"figure": ["Liquid agent", "Bottles"], "value": [12.5, 0.05]})
    back = pd.read_csv(io.BytesIO(to_csv(table, prov)), comment="#")
    assert list(back.columns) == ["figure", "value"]
    assert back["value"].tolist() == [12.5, 0.05]
    wb = load_workbook(io.BytesIO(to_xlsx({"Summary": table}, provenance=prov)))
    assert wb.sheetnames == [HEADING, "Summary"]


def test_records_have_no_predicted_inspired_o2_and_say_so():
    prov = provenance("Record audit", unsafe=None, prices="p", gwp_source="g")
    values = dict(prov.rows())
    assert values["safety"].startswith("not assessed")
    assert values["lowest predicted inspired O2"].startswith("not predicted")
    assert values["input files"].startswith("none")
