"""Every page's exports say what made them, in the same block, safety state first (AppTest)."""

from __future__ import annotations

import hashlib
import io
from dataclasses import replace

import pandas as pd
from openpyxl import load_workbook

from model.case import compute_case
from model.io.plans import load_plan
from tests.helpers import ROOT
from tests.helpers.pages import capture_downloads, download, page, run
from tests.model.present.test_provenance import csv_block, html_block, xlsx_block

DEMO = ROOT / "demo_data"
BLOCK_NAMES = ["safety", "lowest predicted inspired O2", "export of", "program", "made"]


def _sha(path) -> str:
    # Source: FIPS 180-4 (SHA-256), as Python's hashlib computes it.
    return hashlib.sha256(path.read_bytes()).hexdigest()


def _three(seen: dict, prefix: str):
    csv_bytes = download(seen, f"{prefix}_csv")
    xlsx_bytes = download(seen, f"{prefix}_xlsx")
    html_text = download(seen, f"{prefix}_html").decode("utf-8")
    return csv_bytes, xlsx_bytes, html_text


def _same_block(csv_bytes, xlsx_bytes, html_text) -> dict:
    """The block, the same in all three files; input rows (a name may repeat) under "inputs"."""
    rows = csv_block(csv_bytes)
    assert [n for n, _ in rows[:5]] == BLOCK_NAMES

    def timeless(block):  # each file is made when it is asked for: the minute may differ
        return [(n, v) for n, v in block if n != "made"]

    assert timeless(xlsx_block(xlsx_bytes)) == timeless(rows)
    assert timeless(html_block(html_text)) == timeless(rows)
    return {**dict(rows), "inputs": [v for n, v in rows if n.startswith("input: ")]}


def test_a_case_whose_inspired_o2_falls_to_4_percent_is_marked_unsafe_in_every_export(monkeypatch):
    """Defect 2: the summary CSV and the workbook carry the safety state and the lowest inspired O2."""
    seen = capture_downloads(monkeypatch)
    at = page("case_plan.py")
    at.selectbox(key="cp_open_name").select("Laparoscopic cholecystectomy, high flow")
    run(at)
    next(b for b in at.button if b.label.endswith("Open")).click()
    run(at)
    key = next(d.key for d in at.data_editor if d.key.startswith("cp_phases_"))
    at.session_state[key] = {
        "edited_rows": {1: {"O2": "0.1 L/min", "air": "0.4 L/min"}},
        "added_rows": [],
        "deleted_rows": [],
    }
    run(at)
    plan = load_plan(DEMO / "plans" / "lap_chole_high_flow.toml")
    phases = list(plan.phases)
    phases[1] = replace(phases[1], oxygen_l_min=0.1, air_l_min=0.4)
    lowest = compute_case(replace(plan, phases=tuple(phases))).totals["min_inspired_o2_pct"]
    assert round(lowest) == 4
    csv_bytes, xlsx_bytes, html_text = _three(seen, "cp_dl")
    block = _same_block(csv_bytes, xlsx_bytes, html_text)
    assert block["safety"].startswith("UNSAFE PRACTICE")
    assert block["lowest predicted inspired O2"] == f"{lowest:.1f} %"
    # The summary table itself: a safety column and the lowest inspired O2 as a figure.
    summary = pd.read_csv(io.BytesIO(csv_bytes), comment="#")
    assert summary["safety"].str.startswith("UNSAFE PRACTICE").all()
    row = summary[summary["figure"] == "Lowest predicted inspired O2"]
    assert abs(float(row["value"].iloc[0]) - lowest) < 0.05
    ws = load_workbook(io.BytesIO(xlsx_bytes))["Summary"]
    cells = [[c for c in r] for r in ws.iter_rows(values_only=True)]
    head = cells[0]
    assert "safety" in head
    assert any(r[head.index("figure")] == "Lowest predicted inspired O2" for r in cells[1:])
    assert block["input: plan"].startswith("saved plan")


def test_the_record_audit_names_the_files_it_read_with_rows_and_hashes(monkeypatch):
    """Defect 6: the audit's exports name the real purchases files, with the program version."""
    seen = capture_downloads(monkeypatch)
    page("record_audit.py")
    block = _same_block(*_three(seen, "ra_dl"))
    assert block["safety"].startswith("not assessed")
    assert block["program"].startswith("Fresh Gas Ledger ")
    records = DEMO / "records"
    lines = block["inputs"]
    for name in ("fernhollow_2025.parquet", "fernhollow_purchases_2025.csv", "fernhollow_purchases_2026.csv"):
        match = [v for v in lines if v.startswith(name + " (")]
        assert match and _sha(records / name) in match[0] and " rows; " in match[0], (name, lines)
    # No file the user never had (the two purchases files were once named as one made-up file).
    assert not any("2025-2026" in v for v in lines)


def test_the_emissions_report_names_records_purchases_sites_and_prices(monkeypatch):
    """Defect 6: the report's workbook and HTML name the files and prices behind its cost."""
    seen = capture_downloads(monkeypatch)
    page("emissions_report.py")
    block = _same_block(*_three(seen, "er_dl"))
    records = DEMO / "records"
    text = " ".join(block["inputs"])
    for name in ("fernhollow_2026.parquet", "fernhollow_purchases_2026.csv", "fernhollow_sites.csv"):
        assert name in text and _sha(records / name) in text
    assert "invented example prices" in block["prices in use"]
    assert block["GWP source"]


def test_the_year_exports_carry_the_lowest_inspired_o2_of_its_case_types(monkeypatch):
    seen = capture_downloads(monkeypatch)
    page("department_year.py")
    block = _same_block(*_three(seen, "dy_dl"))
    assert block["lowest predicted inspired O2"].endswith(" %")
    assert block["input: case mix"].split(" (")[1].split(";")[0].endswith("case types")


def test_the_year_html_of_an_unsafe_practice_groups_its_cautions_and_shows_figures_first(monkeypatch):
    """Defect 8: one box per caution (with its case types), hazards first, labelling after the figures."""
    from model.cautions import group_cautions

    seen = capture_downloads(monkeypatch)
    at = page("department_year.py")
    name = at.selectbox(key="dy_scenario").value
    at.checkbox(key=f"dy_uf_{name}").check()
    run(at)
    at.number_input(key=f"dy_flow_{name}").set_value(0.5)
    run(at)
    html_text = download(seen, "dy_dl_html").decode("utf-8")
    body = html_text.split("<body>", 1)[1]
    boxes = body.count("<div class='warning'>")
    # The hypoxic-mixture hazard of every case type is one box (62 cautions before grouping).
    from model.io.scenario import load_scenario
    from model.year import compute_year

    scenario = load_scenario(DEMO / "year" / "baseline_2l.toml")
    scenario = replace(scenario, practice=replace(scenario.practice, maintenance_flow_l_min=0.5))
    warnings = compute_year(scenario).warnings
    hazards = [g for g in group_cautions(warnings) if g.severity == "hazard"]
    assert len(warnings) > 40 and boxes == len(hazards) <= 4
    import re

    shown = re.findall(r"<div class='warning'>(.*?)</div>", body, re.S)
    assert sum("predicted inspired O2 falls to" in box for box in shown) == 1
    # The figures come before the cautions of the middle severity and the labelling notes.
    first_figures = body.index("<h2>Headline figures</h2>")
    assert first_figures < body.index("<h2>Cautions and labelling notes</h2>")
    assert first_figures < body.index("<h2>Inputs</h2>")
    assert body.index("<h2>Hazards</h2>") < first_figures
