"""Fresh Gas Ledger dashboard (entry point): `streamlit run app.py`."""

from pathlib import Path

import streamlit as st

from model import compute_case, load_plan

st.set_page_config(page_title="Fresh Gas Ledger", layout="wide")
st.title("Fresh Gas Ledger")
st.warning(
    "Estimates support planning, budgeting and reporting; they are not a prescription. "
    "Flows, mixes and dial settings follow local protocols, the workstation's instructions "
    "for use and licensed practice, with inspired O2 and end-tidal agent monitored."
)
plan = load_plan(Path(__file__).parent / "demo_data" / "plans" / "lap_chole_low_flow.toml")
result = compute_case(plan)
t = result.totals
st.subheader(plan.name)
cols = st.columns(4)
cols[0].metric("Liquid agent", f"{t['liquid_agent_ml']:.1f} mL")
cols[1].metric("CO2e", f"{t['co2e_total_kg']:.2f} kg")
cols[2].metric("Cost", f"{t['cost_total']:.2f} {result.currency}")
cols[3].metric("MAC-hours", f"{t['mac_hours']:.2f}")
st.dataframe(result.phases, hide_index=True)
for w in result.warnings:
    st.caption(w)
