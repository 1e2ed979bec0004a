"""Orders: what pharmacy orders each month, what it costs, and the chance of running out."""

from __future__ import annotations

import json
from pathlib import Path

import pandas as pd
import streamlit as st

import ui
import ui.provenance
from model import InputError
from model.present.stock_charts import stock_chart
from model.stock.orders import FORECAST_CAUTION, notes, read_orders_plan, total_stock_value, work_out_orders

FOLDER = Path(__file__).resolve().parent.parent / "demo_data" / "orders"

view = ui.page_start(
    "Orders",
    "Bottles of each agent and N2O cylinders to order month by month from a forecast of use: "
    "stock carried over, lead time, review period, service level, cases and shelf life.",
)
ref = ui.reference(view)
ref_key = ui.reference_key(view)


@st.cache_data(show_spinner="Working out the orders ...", max_entries=16)
def _worked_out(path: str, text: str, overrides: str, ref_key: str, _ref):
    plan = read_orders_plan(path, _ref)
    return work_out_orders(plan, _ref, json.loads(overrides))


files = sorted(FOLDER.glob("*.toml"))
if not files:
    st.error("No orders plan files in demo_data/orders.")
    st.stop()
picked = st.selectbox(
    "Orders plan",
    [f.name for f in files],
    key="or_plan",
    help="The orders plans of the demo folder (their format: File formats, 'Orders plan', in the documentation).",
)
path = FOLDER / picked
try:
    current = _worked_out(str(path), path.read_text(encoding="utf-8"), "{}", ref_key, ref)
except InputError as err:
    st.error(ui.md(str(err)))
    st.stop()

orders = current.orders_table()
h = [ln for ln in notes(current) if "held out" in ln or "hold-out" in ln]
st.warning(FORECAST_CAUTION + " " + " ".join(h), icon=":material/warning:")
for line in (ln for ln in notes(current) if " stops from " in ln):
    st.caption(ui.md(line))
c1, c2, c3, c4 = st.columns(4)
months = current.months_table()
c1.metric("Orders in the plan", f"{len(orders)}")
c2.metric(f"Paid for deliveries ({current.currency})", f"{months[f'cash_{current.currency}'].sum():,.0f}")
if current.year_budget is not None:
    c4.metric(f"Department year's cost of these items ({current.currency})", f"{current.year_budget:,.0f}")
c3.metric("Highest stock-out chance in a month", f"{months['stockout_chance'].max():.0%}")
item = st.selectbox("Item", list(current.stock), key="or_item")
st.plotly_chart(stock_chart(current, item), key="or_stock_fig")
st.subheader("Orders")
st.dataframe(orders, hide_index=True, key="or_orders_fig")
st.subheader("Cash by month")
st.dataframe(current.cash_by_month(), hide_index=True)

ui.downloads(
    "orders",
    {"Orders": orders, "Months": months, "Cash": current.cash_by_month()},
    None,
    key="or_downloads",
    notes=(*notes(current), *(f"{k}: {v}" for k, v in ui.provenance.in_use(view, ref).items())),
)
ui.provenance.show(view, ref)

st.subheader("What if")
first = current.plan.items[0]
w1, w2, w3 = st.columns(3)
lead = w1.number_input("Lead time [months]", 0.0, 12.0, float(first.lead_months), 0.5, key="or_lead")
level = w2.number_input("Service level", 0.5, 0.999, float(first.service_level), 0.01, key="or_service")
case = w3.number_input("Bottles per case", 1, 48, int(first.order_multiple), 1, key="or_case")
asked = {"lead_months": float(lead), "service_level": float(level), "order_multiple": int(case)}
# only what was changed applies, to every item; an item's other values stay as the plan has them
overrides = {k: v for k, v in asked.items() if v != getattr(first, k)}
if "order_multiple" in overrides:
    overrides["pack_bottles"] = 1
try:
    what_if = _worked_out(str(path), path.read_text(encoding="utf-8"), json.dumps(overrides), ref_key, ref)
except InputError as err:
    st.error(ui.md(str(err)))
    st.stop()


def _summary(res) -> dict:
    m = res.months_table()
    o = res.orders_table()
    return {
        "orders": len(o),
        "bottles ordered": int(o["bottles"].sum()),
        f"paid ({res.currency})": round(float(m[f"cash_{res.currency}"].sum())),
        f"stock held at the end ({res.currency})": round(float(total_stock_value(res)[-1])),
        "bottles expiring": int(m["expired_bottles"].sum()),
        "highest stock-out chance [%]": round(100 * float(m["stockout_chance"].max())),
    }


st.dataframe(pd.DataFrame({"plan as written": _summary(current), "what if": _summary(what_if)}), key="or_what_if_fig")
st.caption("The what-if starts from the first item's values; a value you change applies to every item at once.")
st.dataframe(what_if.orders_table(), hide_index=True, key="or_what_if_orders_fig")
