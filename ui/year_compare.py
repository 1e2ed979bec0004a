"""The "Year scenarios" tab of the Compare page: a baseline year against a proposal, paired."""

from __future__ import annotations

import pandas as pd
import streamlit as st

import ui
from model import InputError
from model.io.exports import html_report
from model.io.scenario import load_scenario
from model.year.compare import nonzero_rows

from . import format as fmt
from . import year_views as yv

HEADLINES = [("cost_total", "cost"), ("bottles_total", "bottles"), ("co2e_total_t", "t CO2e"),
             ("absorbent_kg", "absorbent (kg)")]


def render(view) -> None:
    """Draw the year comparison: choices, paired differences with bands, chart, downloads."""
    ref = ui.reference(view)
    ref_key = ui.reference_key(view)
    files = yv.scenario_files()
    names = list(files)
    if len(names) < 2:
        st.info("Add at least two scenario files to demo_data/year to compare years.")
        return
    st.caption("Both years use the same random draws (durations, adherence, prices, GWP source), so the "
               "band of the difference is its own, not two bands set side by side. Negative = the proposal saves.")
    c1, c2 = st.columns(2)
    b_name = c1.selectbox("Baseline year", names, index=0, key="yc_base")
    p_name = c2.selectbox("Proposal", names, index=min(1, len(names) - 1), key="yc_prop")
    try:
        baseline = yv.scenario_for_view(load_scenario(files[b_name]), view)
        proposal = yv.scenario_for_view(load_scenario(files[p_name]), view)
        with st.spinner("Sampling both years..."):
            comp = yv.run_compare(baseline, proposal, ref, ref_key)
    except InputError as err:
        ui.show_input_error(err)
        return
    rows = comp.summary.set_index("key")
    cols = st.columns(len(HEADLINES))
    for col, (key, label) in zip(cols, HEADLINES):
        r = rows.loc[key]
        unit = f" {comp.baseline.currency}" if key == "cost_total" else ""
        col.metric(f"Change in {label}", f"{r['difference']:+,.1f}{unit}")
        col.caption(f"P5-P95: {r['p5']:+,.1f} to {r['p95']:+,.1f}")
    fig = yv.difference_figure(comp.summary, [("cost_total", f"cost ({comp.baseline.currency})"),
                                              ("bottles_total", "bottles"), ("co2e_total_t", "t CO2e"),
                                              ("absorbent_kg", "absorbent")])
    st.plotly_chart(fig, width="stretch", key="yc_fig")
    table = nonzero_rows(comp.summary, ("baseline", "proposal", "p5", "p95")).drop(columns=["key"])
    fmt.table(table, comp.baseline.currency)
    warnings = list(dict.fromkeys(comp.baseline.warnings + comp.proposal.warnings))
    if warnings:
        with st.expander(f"Warnings ({len(warnings)})", icon=":material/warning:"):
            for w in warnings:
                st.warning(ui.md(w))
    for note in dict.fromkeys(comp.notes + comp.proposal.notes):
        st.caption(note)
    tables = {"Year comparison": table, "Baseline per month": comp.baseline.monthly,
              "Proposal per month": comp.proposal.monthly, "Sources": pd.DataFrame(ref.table())}
    inputs = {"baseline": baseline.name, "proposal": proposal.name, "GWP source": comp.baseline.inputs.gwp_label,
              "paired draws": comp.baseline.n_draws, "seed": comp.baseline.seed}

    def _report() -> str:
        return html_report("Year comparison", inputs=inputs, tables={"Paired difference": table},
                           figures=[("Change per year", fig)], warnings=warnings,
                           cautions=[ui.CAUTION, *comp.proposal.notes], sources=tables["Sources"],
                           currency=comp.baseline.currency)

    ui.downloads("year comparison", tables, _report, key="yc_dl")
