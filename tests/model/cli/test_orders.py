import json
from pathlib import Path

import openpyxl
import pytest

from model.cli.main import main

DEMO = Path("demo_data/orders/fernhollow_orders.toml").resolve()


def _variant(tmp_path, old, new, name="plan.toml"):
    text = DEMO.read_text(encoding="utf-8").replace(old, new, 1)
    text = text.replace('"../', f'"{DEMO.parent.parent}/')
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return str(p)


def test_orders_table_json_csv_and_workbook(tmp_path, capsys):
    csv, xlsx = tmp_path / "o.csv", tmp_path / "o.xlsx"
    assert main(["orders", str(DEMO), "--json", "--csv", str(csv), "--xlsx", str(xlsx)]) == 0
    data = json.loads(capsys.readouterr().out)
    orders = data["orders"]
    assert orders and {o["item"] for o in orders} == {"sevoflurane", "desflurane", "isoflurane", "nitrous_oxide"}
    # Whole cases (common practice, no source): the demo's sevoflurane and desflurane come in cases of 6
    assert all(o["bottles"] % 6 == 0 for o in orders if o["item"] in ("sevoflurane", "desflurane"))
    # the desflurane phased out from July: no delivery after June
    assert all(o["delivery_month"] in ("Feb", "Mar", "Apr", "May", "Jun") for o in orders if o["item"] == "desflurane")
    last = max(o["order_month"] for o in orders if o["item"] == "desflurane")
    assert any(n.startswith("desflurane stops from Jul") and "bottles' worth left" in n for n in data["notes"])
    assert last in ("Apr", "May", "Jun")
    # totals equal the sum of months (common practice, no source)
    assert data["total_cost"] == pytest.approx(sum(m["cash_GBP"] for m in data["months"]))
    # the year's budget for the items is the Department year's own cost of them (model.year totals)
    assert data["year_budget"] > 0
    assert csv.read_text(encoding="utf-8").count("\n") == len(orders) + 1
    wb = openpyxl.load_workbook(xlsx)
    assert {"Orders", "Months", "Cash", "Notes"} <= set(wb.sheetnames)
    notes = [r[0] for r in wb["Notes"].iter_rows(values_only=True)]
    assert any("not a guarantee" in n for n in notes) and any("Silver, Pyke and Thomas" in n for n in notes)


def test_orders_from_history_report_the_holdout_error(tmp_path, capsys):
    plan = _variant(tmp_path, 'forecast = "year"', 'forecast = "history"')
    assert main(["orders", plan]) == 0
    out = capsys.readouterr().out
    assert "held out" in out and "not a guarantee" in out


@pytest.mark.parametrize(
    ("old", "new", "field"),
    [
        ("opening_bottles = 30", "opening_bottles = -3", "items.sevoflurane.opening_bottles"),
        ("lead_months = 1 ", "lead_months = 14 ", "items.sevoflurane.lead_months"),
        ("pack_bottles = 1", "pack_bottles = 4", "items.sevoflurane.order_multiple"),
        ("[items.isoflurane]", "[items.xenonane]", "items.xenonane"),
        ("opening_open_ml = 600", "opening_open_ml = -1", "items.sevoflurane.opening_open_ml"),
    ],
)
def test_bad_orders_plan_names_the_field(tmp_path, capsys, old, new, field):
    plan = _variant(tmp_path, old, new)
    assert Path(plan).read_text(encoding="utf-8") != DEMO.read_text(encoding="utf-8")
    assert main(["orders", plan]) == 2
    err = capsys.readouterr().err
    assert field in err and "Traceback" not in err
