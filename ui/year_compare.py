"""The "Year scenarios" tab of the Compare page.

A chosen baseline year against any number of proposals (demo files or years saved in the
store), each paired with the baseline.
"""

from __future__ import annotations

import pandas as pd
import streamlit as st

import ui
import ui.cautions
import ui.provenance
import ui.year_store
from model import InputError
from model.cautions import by_severity
from model.io.case_mix import case_mix_to_csv
from model.present import year_charts
from model.present.exports import html_export
from model.present.provenance import input_file
from model.present.readable import signed_text
from model.year.compare import nonzero_rows

from . import tables as fmt
from . import year_views as yv

HEADLINES = [
    ("cost_total", "cost"),
    ("bottles_total", "bottles"),
    ("co2e_total_t", "t CO2e"),
    ("absorbent_kg", "absorbent (kg)"),
]
#: Most proposals compared at once (each is a paired run of two years).
MAX_PROPOSALS = 6


def render(view) -> None:
    """Draw the year comparison: choices, paired differences with P5-P95 ranges, chart, downloads."""
    ss = st.session_state
    ref = ui.reference(view)
    ref_key = ui.reference_key(view)
    store = ui.get_store()
    choices = ui.year_store.choices(store)
    names = list(choices)
    if len(names) < 2:
        st.info(
            "Save a second year on the Department year page (or add a scenario file to demo_data/year) "
            "to compare years."
        )
        return
    st.caption(
        "Each proposal uses the same random draws as the baseline (durations, adherence, prices, GWP "
        "source), so the P5-P95 range of each difference is its own, not two ranges set side by side. "
        "Negative = the proposal saves."
    )
    if ss.get("yc_base") not in names:
        ss.pop("yc_base", None)
    c1, c2 = st.columns([1, 2])
    b_name = c1.selectbox(
        "Baseline year",
        names,
        index=0,
        key="yc_base",
        help="Demo scenario files and the years saved on the Department year page",
    )
    others = [n for n in names if n != b_name]
    ss["yc_props"] = [n for n in ss.get("yc_props", others[:1]) if n in others]
    p_names = c2.multiselect(
        "Proposals, each against the baseline", others, key="yc_props", max_selections=MAX_PROPOSALS
    )
    own_prices = st.checkbox(
        "Use each scenario's own prices",
        key="yc_own_prices",
        help="Off: the prices in use on every page (your Reference values over the "
        "built-in examples) for every year. On: each scenario's [prices].",
    )
    ui.provenance.show(view, ref, ("each scenario", None) if own_prices else None)
    if not p_names:
        st.info("Choose one or more proposals to set against the baseline.")
        return
    try:

        def scenario(name):
            return yv.scenario_for_view(ui.year_store.load(store, choices[name]), view, own_prices=own_prices)

        baseline = scenario(b_name)
        with st.spinner("Sampling the years..."):
            comps = {n: yv.run_compare(baseline, scenario(n), ref, ref_key) for n in p_names}
    except InputError as err:
        ui.show_input_error(err)
        return

    first = next(iter(comps.values()))
    st.caption(f"{first.baseline.range_label}.")
    warnings = by_severity([w for c in comps.values() for w in c.warnings])
    unsafe_names = ([b_name] if first.baseline.unsafe else []) + [n for n, c in comps.items() if c.proposal.unsafe]
    if unsafe_names:
        ui.cautions.unsafe_banner(warnings, " and ".join(f"'{n}'" for n in unsafe_names))
    labels = [
        ("cost_total", f"cost ({first.baseline.currency})"),
        ("bottles_total", "bottles"),
        ("co2e_total_t", "t CO2e"),
        ("absorbent_kg", "absorbent"),
    ]
    tables, figs, rows_all = {}, [], []
    for i, (p_name, comp) in enumerate(comps.items()):
        rows = comp.summary.set_index("key")
        with st.container(border=True):
            flag = f" — :red[**{ui.cautions.UNSAFE}**]" if comp.proposal.unsafe else ""
            st.markdown(f"**{ui.md(p_name)}** against **{ui.md(b_name)}**{flag}")
            cols = st.columns(len(HEADLINES))
            for col, (key, label) in zip(cols, HEADLINES, strict=True):
                r = rows.loc[key]
                money = key == "cost_total"
                unit = f" {comp.baseline.currency}" if money else ""
                digits = None if money else 1
                col.metric(f"Change in {label}", signed_text(r["difference"], money=money, digits=digits) + unit)
                col.caption(
                    f"P5-P95: {signed_text(r['p5'], money=money, digits=digits)} to "
                    f"{signed_text(r['p95'], money=money, digits=digits)}"
                )
            fig = year_charts.difference_figure(comp.summary, labels)
            st.plotly_chart(fig, width="stretch", key=f"yc_fig_{i}")
            figs.append((f"Change per year: {p_name}", fig))
            table = nonzero_rows(comp.summary, ("baseline", "proposal", "p5", "p95")).drop(columns=["key"])
            if comp.proposal.unsafe or comp.baseline.unsafe:
                table.insert(0, "safety", ui.cautions.UNSAFE)
            # Shown under its own heading, so no column repeats the year's name: every column
            # fits a laptop's width. The download's one table names the year on each row.
            fmt.table(table, first.baseline.currency)
        table.insert(0, "year compared", p_name)
        rows_all.append(table)
        tables[f"Proposal {i + 1} per month"] = comp.proposal.monthly
    table = pd.concat(rows_all, ignore_index=True)
    ui.cautions.show_other_warnings(warnings)
    notes = list(dict.fromkeys(n for c in comps.values() for n in c.notes + c.proposal.notes))
    for note in notes:
        st.caption(note)
    inputs = {"baseline": baseline.name, "safety of the baseline": ui.cautions.safety_text(first.baseline.warnings)}
    for i, comp in enumerate(comps.values(), start=1):
        inputs[f"proposal {i}"] = comp.proposal.scenario.name
        inputs[f"safety of proposal {i}"] = ui.cautions.safety_text(comp.proposal.warnings)
        inputs.update(
            {f"proposal {i}, {k}": v for k, v in ui.provenance.practice_rows(comp.proposal.scenario.practice).items()}
        )
    inputs.update(ui.provenance.in_use(view, ref, ("each scenario", None) if own_prices else None))
    inputs.update(
        {
            "GWP source": first.baseline.inputs.gwp_label,
            "P5-P95 ranges": first.baseline.range_label,
            "paired draws": first.baseline.n_draws,
            "seed": first.baseline.seed,
        }
    )
    tables = {
        "Year comparison": table,
        "Inputs": ui.provenance.inputs_table(inputs),
        "Baseline per month": first.baseline.monthly,
        **tables,
        "Warnings": ui.cautions.warnings_table(warnings),
        "Sources": pd.DataFrame(ref.table()),
    }

    years = {b_name: first.baseline, **{n: c.proposal for n, c in comps.items()}}
    files = []
    for i, (n, yr) in enumerate(years.items()):
        role = "baseline scenario" if i == 0 else f"proposal {i}"
        where = f"saved scenario '{n}'" if choices[n].kind == "saved" else f"demo file {choices[n].path.name}"
        mix = yr.scenario.case_mix
        files.append(input_file(role, where, ui.year_store.scenario_file(yr.scenario, "case mix")))
        files.append(
            input_file(f"{role}, case mix", f"case mix of {where}", case_mix_to_csv(mix), len(mix.types), "case types")
        )
    prov = ui.provenance.block(
        view,
        ref,
        "Year comparison: " + ", ".join(years),
        warnings=warnings,
        lowest_inspired_o2_pct=min(yr.lowest_inspired_o2_pct for yr in years.values()),
        files=files,
        own=("each scenario", None) if own_prices else None,
        settings={"paired draws": first.baseline.n_draws, "seed": first.baseline.seed},
    )

    def _report(prov) -> str:
        return html_export(
            ("UNSAFE PRACTICE. " if unsafe_names else "") + "Year comparison",
            inputs=inputs,
            tables={"Paired difference": table},
            figures=figs,
            warnings=ui.cautions.caution_lines(warnings),
            cautions=[ui.CAUTION, *notes],
            sources=tables["Sources"],
            currency=first.baseline.currency,
            provenance=prov,
        )

    ui.downloads("year comparison", tables, _report, key="yc_dl", provenance=prov)
