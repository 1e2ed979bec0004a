"""``gas-ledger audit --purchases``: bad purchase lines set aside, the rest read and reconciled."""

import json
from pathlib import Path

import pytest

from tests.helpers.cli import assert_one_line_error, run

ROOT = Path(__file__).resolve().parents[3]


BIRCH = ROOT / "demo_data" / "records" / "fernhollow_birch_cases.csv"


def test_purchases_line_with_extra_fields_is_set_aside_not_shifted(tmp_path, capsys):
    # Issue 15: the line is set aside alone (it once refused the whole file).
    purchases = tmp_path / "p.csv"
    purchases.write_text(
        "month,item,quantity,unit,size\n2025-09,sevoflurane,9,bottle,,,\n2025-09,desflurane,2,bottle,\n",
        encoding="utf-8",
    )
    status, out, err = run(["audit", BIRCH, "--purchases", purchases, "--json"], capsys)
    assert status == 0, err
    data = json.loads(out)
    assert len(data["purchase_lines_set_aside"]) == 1
    assert "line 2" in data["purchase_lines_set_aside"][0] and "7 fields" in data["purchase_lines_set_aside"][0]
    bought = {r["item"] for r in data["reconciliation"] if r["purchased"]}
    assert bought == {"desflurane"}


def test_purchases_parquet_with_empty_size_and_date_month_is_read(tmp_path, capsys):
    import pandas as pd

    path = tmp_path / "p.parquet"
    pd.DataFrame(
        {
            "month": pd.to_datetime(["2025-09-01", "2025-09-15"]),
            "item": ["sevoflurane", "nitrous_oxide"],
            "quantity": [9, 1],
            "unit": ["bottle", "cylinder"],
            "size": [None, "9000 L"],
        }
    ).to_parquet(path)
    status, out, err = run(["audit", BIRCH, "--purchases", path, "--json"], capsys)
    assert status == 0, err
    bought = {(r["item"], r["month"]): r["purchased"] for r in json.loads(out)["reconciliation"]}
    # 9 bottles of the 250 mL reference bottle (common practice, no source) = 2250 mL
    assert bought[("sevoflurane", "2025-09")] == pytest.approx(2250.0)
    assert bought[("nitrous_oxide", "2025-09")] == pytest.approx(9000.0)


def test_purchases_folder_is_named_as_a_folder(tmp_path, capsys):
    status, _, err = run(["audit", BIRCH, "--purchases", tmp_path], capsys)
    assert_one_line_error(status, err, "that is a folder")
    assert "does not exist" not in err


def test_audit_sets_a_bad_purchase_line_aside_and_reconciles_the_rest(tmp_path, capsys):
    purchases = tmp_path / "p.csv"
    purchases.write_text(
        "month,item,quantity,unit,size\n2025-09,sevoflurane,9,bottle,\n"
        "2025-09,sevoflurane,nine,bottle,\n2025-09,isoflurane,1,bottle,\n",
        encoding="utf-8",
    )
    status, out, err = run(["audit", BIRCH, "--purchases", purchases], capsys)
    assert status == 0, err
    assert "1 purchase line(s) set aside" in out and f"{purchases}, line 3: quantity" in out
    status, out, err = run(["audit", BIRCH, "--purchases", purchases, "--json"], capsys)
    data = json.loads(out)
    assert [m.split(": ")[0] for m in data["purchase_lines_set_aside"]] == [f"{purchases}, line 3"]
    bought = {(r["item"], r["month"]): r["purchased"] for r in data["reconciliation"]}
    # 9 bottles of the 250 mL reference bottle (common practice, no source) = 2250 mL; the
    # line that says "nine" adds nothing, the isoflurane line after it is kept.
    assert bought[("sevoflurane", "2025-09")] == pytest.approx(2250.0)
    assert ("isoflurane", "2025-09") in bought
