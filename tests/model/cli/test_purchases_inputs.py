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


RECORDS = ROOT / "demo_data" / "records"
YEARS = [RECORDS / "fernhollow_2025.parquet", RECORDS / "fernhollow_2026.parquet"]
PURCHASES = [RECORDS / "fernhollow_purchases_2025.csv", RECORDS / "fernhollow_purchases_2026.csv"]


def test_every_purchases_file_given_is_reconciled_not_only_the_last(capsys):
    from model.io.purchases import read_purchases

    args = ["audit", *YEARS, "--purchases", PURCHASES[0], "--purchases", PURCHASES[1], "--json"]
    status, out, err = run(args, capsys)
    assert status == 0, err
    data = json.loads(out)
    assert [f["file"] for f in data["purchases_files"]] == [str(p) for p in PURCHASES]
    # The total bought of each item is the sum over both files (read one by one).
    both = sum(read_purchases(p).query("item == 'sevoflurane'")["amount"].sum() for p in PURCHASES)
    total = next(r for r in data["reconciliation"] if r["item"] == "sevoflurane" and r["month"] == "all")
    assert total["purchased"] == pytest.approx(both, rel=1e-12)
    assert data["record_coverage"]["months_bought"] == 24 and not data["record_coverage"]["partial"]


def test_two_years_of_records_against_one_year_of_purchases_say_so_and_estimate_no_n2o_loss(capsys):
    status, out, err = run(["audit", *YEARS, "--purchases", PURCHASES[0]], capsys)
    assert status == 0, err
    assert "12 of the 24 month(s) with records (between 2026-01 and 2026-12) have no purchases" in out
    assert "Coverage by month and theatre" in out
    assert "N2O apparent loss: not estimated" in out
    assert "% of purchases" not in out
