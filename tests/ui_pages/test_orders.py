"""AppTest of the Orders page."""

from __future__ import annotations

import json

from model.cli.main import main
from tests.helpers import ROOT
from tests.helpers.pages import page, run

DEMO = ROOT / "demo_data" / "orders" / "fernhollow_orders.toml"


def test_page_and_command_give_the_same_orders(capsys):
    assert main(["orders", str(DEMO), "--json"]) == 0
    cli = json.loads(capsys.readouterr().out)["orders"]
    at = page("orders.py")
    assert at.title[0].value == "Orders"
    shown = at.dataframe[0].value
    assert len(shown) == len(cli)
    assert shown["bottles"].tolist() == [o["bottles"] for o in cli]
    assert shown["item"].tolist() == [o["item"] for o in cli]
    assert any("not a guarantee" in w.value for w in at.warning)
    assert len(at.get("plotly_chart")) == 1
    assert any("stops from Jul" in c.value for c in at.caption)
    assert not at.error


def test_a_higher_service_level_orders_more_in_the_what_if():
    at = page("orders.py")
    plan_before = at.dataframe[0].value["bottles"].tolist()
    # nothing changed yet: the what-if is the plan
    assert at.dataframe[-1].value["bottles"].tolist() == plan_before
    at.number_input(key="or_case").set_value(1)  # single bottles: the demo's cases of 6 hide small changes
    run(at)
    before = at.dataframe[-1].value["bottles"].sum()
    at.number_input(key="or_service").set_value(0.999)
    run(at)
    after = at.dataframe[-1].value["bottles"].sum()
    # Source: Silver, Pyke and Thomas 2017 (from memory): safety stock rises with the service level's z
    assert after > before
    assert at.dataframe[0].value["bottles"].tolist() == plan_before  # the plan as written stays beside it
