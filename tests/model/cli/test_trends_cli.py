"""The ``gas-ledger trends`` command on the demo records (their invented programme starts 2026-01)."""

import csv
import io
import json
from pathlib import Path

from model.cli import main

ROOT = Path(__file__).resolve().parents[3]
RECORDS = [str(ROOT / "demo_data" / "records" / f"fernhollow_{y}.parquet") for y in (2025, 2026)]
ONE = ["--measure", "co2e_kg_per_case", "--measure", "co2e_t"]


def test_table_lists_signals_effect_and_caution(capsys):
    assert main(["trends", *RECORDS, "--change", "2026-01", *ONE]) == 0
    out = capsys.readouterr().out
    for text in ("Signals", "Western Electric", "Anhøj", "level change", "saved", "Newey-West", "not a prescription"):
        assert text in out


def test_json_has_the_effect_with_intervals(capsys):
    assert main(["trends", *RECORDS, "--change", "2026-01", *ONE, "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    effect = {e["measure"]: e for e in data["programme_effect"]}
    lo, hi = effect["co2e_t"]["saved_ci"]
    assert 0 < lo < effect["co2e_t"]["saved_against_counterfactual"] < hi
    assert data["caution"] and data["signals"]
    assert len(data["measures"]) == 24


def test_csv_is_the_charts_table(capsys):
    assert main(["trends", *RECORDS, "--measure", "co2e_kg_per_case", "--csv"]) == 0
    rows = list(csv.DictReader(io.StringIO(capsys.readouterr().out)))
    assert len(rows) == 24
    assert {"group", "measure", "month", "value", "centre", "lcl", "ucl", "signal"} <= set(rows[0])


def test_bad_change_and_measure_are_messages(capsys):
    assert main(["trends", *RECORDS, "--change", "2030-01"]) == 2
    err = capsys.readouterr().err
    assert "--change" in err and "2025-01 to 2026-12" in err and "Traceback" not in err
    assert main(["trends", *RECORDS, "--measure", "happiness"]) == 2
    assert "--measure" in capsys.readouterr().err


def test_html_has_the_charts_and_the_signals(capsys, tmp_path):
    out = tmp_path / "trends.html"
    assert main(["trends", *RECORDS, "--change", "2026-01", *ONE, "--html", str(out)]) == 0
    html = out.read_text(encoding="utf-8")
    assert html.count("plotly-graph-div") >= 2 and "Western Electric" in html and "level change" in html
    assert "not a prescription" in html
    assert main(["trends", *RECORDS, "--html", str(tmp_path / "nowhere" / "t.html")]) == 2
    assert "--html" in capsys.readouterr().err
