"""Department year: a case mix under one practice, scaled to a year with P5-P95 ranges."""

from __future__ import annotations

from dataclasses import replace

import pandas as pd
import streamlit as st

import ui
import ui.cautions
import ui.provenance
import ui.state
import ui.year_store
from model import InputError
from model.io.case_mix import case_mix_from_frame, case_mix_to_csv, case_mix_to_frame
from model.present import year_charts
from model.present.exports import html_export
from model.present.palette import CO2E_COLOUR
from model.present.provenance import input_file
from model.present.readable import field_words, when_text
from model.reference import GWP_SOURCES, VOLATILES
from model.store.access import author_label
from model.year.compare import nonzero_rows
from model.year.inputs import MAX_DRAWS, Practice, Sampling
from model.year.result import BOTTLES_COUNTED
from ui import tables as fmt
from ui import year_views as yv

view = ui.page_start(
    "Department year",
    "A department's case mix scaled to a year: bottles per month, "
    "gases, absorbent, cost and CO2e, with P5-P95 ranges from sampled durations, "
    "adherence, prices and GWP source.",
)
ref = ui.reference(view)
ref_key = ui.reference_key(view)
ss = st.session_state

store = ui.get_store()
if "dy_pick_pending" in ss:  # after a save or an upload: show the year just saved
    ss["dy_scenario"] = ss.pop("dy_pick_pending")
    ss["dy_version"] = "latest"
    ss["dy_save_note"] = ""
choices = ui.year_store.choices(store)
if not choices:
    st.error("No scenario files found in demo_data/year and none saved.")
    st.stop()
if ss.get("dy_scenario") not in choices:
    ss.pop("dy_scenario", None)


def _of_year(name: str):
    """Whether a session key holds one of the inputs of the year ``name`` (keys end with its name)."""
    return lambda k: k.startswith("dy_") and (k.endswith(f"_{name}") or k.startswith(f"dy_gwps_{name}_"))


# Edits of the practice and the case mix are kept per scenario (and version) for the session;
# "Discard edits" forgets those of the year shown, before its widgets are drawn again.
edited_years: dict[str, list[str]] = ss.setdefault("dy_edited", {})
if "dy_discard_pending" in ss:
    gone = ss.pop("dy_discard_pending")
    ui.state.forget_inputs(_of_year(gone))
    edited_years.pop(gone, None)
c1, c2 = st.columns([4, 1], vertical_alignment="bottom")
picked = c1.selectbox(
    "Scenario",
    list(choices),
    key="dy_scenario",
    help="The demo scenario files (TOML, in demo_data/year; each names its case-mix CSV) and "
    f"the years you saved (marked '{ui.year_store.SAVED.strip()}').",
)
choice = choices[picked]
versions = ["latest"] + (
    [str(v.version) for v in store.history("scenario", choice.name)] if choice.kind == "saved" else []
)
if ss.get("dy_version") not in versions:
    ss["dy_version"] = "latest"
version = c2.selectbox("Version", versions, key="dy_version", disabled=choice.kind != "saved")
# Widget keys carry the scenario (and the version opened), so each keeps its own inputs.
name = picked if version == "latest" else f"{picked} v{version}"
edits_slot = st.container()  # what is edited and not saved, filled in once the figures are known
# The year's headline figures are drawn here, above the inputs that make them, so that a laptop
# screen shows them first (they are filled in once the year is worked out).
head = st.container()
try:
    base = ui.year_store.load(store, choice, None if version == "latest" else int(version))
except InputError as err:
    ui.show_input_error(err)
    st.stop()
library = {**yv.plan_library(), **base.case_mix.plans}
own_items = ui.provenance.price_items(base.prices)
own_prices = bool(own_items) and st.checkbox(
    "Use the scenario's own prices",
    key=f"dy_own_prices_{name}",
    help="Off: the prices in use on every page (your Reference values over the built-in examples). "
    f"On: the prices written in the scenario for {', '.join(own_items)}.",
)
own = (f"the scenario '{base.name}'", base.prices) if own_prices else None
ui.provenance.show(view, ref, own)

st.subheader("Case mix")
st.caption(
    "Edit counts, durations, agent shares and each type's plan (its flow practice). Durations in "
    "minutes; spread is the SD of ln(duration); shares as fractions."
)
share_cols = {
    a: st.column_config.NumberColumn(a, min_value=0.0, max_value=1.0, step=0.05, format="%.2f") for a in VOLATILES
}
mix_key = f"dy_mix_{name}"
edited = st.data_editor(
    ui.state.editor_base(mix_key, case_mix_to_frame(base.case_mix)),
    key=mix_key,
    num_rows="dynamic",
    hide_index=True,
    width="stretch",
    column_config={
        "case_type": st.column_config.TextColumn("case type", required=True),
        "cases_per_year": st.column_config.NumberColumn("cases / year", min_value=0, step=10, format="%d"),
        "median_duration": st.column_config.NumberColumn("median min", min_value=1.0, step=5.0),
        "duration_spread": st.column_config.NumberColumn("spread", min_value=0.0, max_value=2.0, step=0.05),
        **share_cols,
        "n2o_share": st.column_config.NumberColumn("N2O share", min_value=0.0, max_value=1.0, step=0.05),
        "weight": st.column_config.NumberColumn("kg", min_value=0.5, max_value=350.0),
        "age": st.column_config.NumberColumn("age", min_value=0.0, max_value=120.0),
        "plan": st.column_config.SelectboxColumn("plan", options=sorted(library), required=True),
    },
)
ui.state.remember_editor(mix_key, edited)
mix_slot = st.empty()
last_key = f"dy_last_{name}"  # (scenario, result, mix) of the last valid year
stale = False
try:
    mix = case_mix_from_frame(edited, library, "Case mix table")
except InputError as err:
    # Shown by the table; the practice panel, the last valid figures and downloads stay.
    mix_slot.error(ui.md(field_words(str(err))), icon=":material/error:")
    mix = ss[last_key][2] if last_key in ss else base.case_mix
    stale = True

with st.expander("Practice change and uncertainty", expanded=False, icon=":material/tune:"):
    p = base.practice
    c1, c2, c3 = st.columns(3)
    use_flow = c1.checkbox("Set maintenance flow", value=p.maintenance_flow_l_min is not None, key=f"dy_uf_{name}")
    flow = c1.number_input(
        "Maintenance flow (L/min)",
        0.1,
        10.0,
        p.maintenance_flow_l_min or 2.0,
        0.1,
        key=f"dy_flow_{name}",
        disabled=not use_flow,
    )
    use_o2 = c1.checkbox(
        "Set O2 share of that flow",
        value=p.maintenance_o2_share is not None,
        key=f"dy_uo_{name}",
        help="A low flow needs a richer O2 mix to keep inspired O2 above the floor.",
    )
    o2_pct = c1.number_input(
        "O2 flowmeter share of maintenance flow (%)",
        21.0,
        100.0,
        float((p.maintenance_o2_share or 0.8) * 100),
        5.0,
        key=f"dy_o2_{name}",
        disabled=not use_o2,
    )
    dial_factor = c1.number_input(
        "Dial factor in maintenance",
        0.5,
        3.0,
        p.dial_factor,
        0.05,
        key=f"dy_df_{name}",
        help="Multiplies the maintenance dial setting; a lower flow needs a higher dial. "
        "Plans with an end-tidal target need none: the model finds the dial.",
    )
    switch = c2.checkbox(
        "Move desflurane cases to sevoflurane", value=p.switch_from == "desflurane", key=f"dy_sw_{name}"
    )
    adh = c2.slider(
        "Adherence: low, likely, high (%)",
        0,
        100,
        (round(p.adherence_low * 100), round(p.adherence_high * 100)),
        key=f"dy_adh_{name}",
    )
    mode = c2.slider("Most likely adherence (%)", 0, 100, round(p.adherence * 100), key=f"dy_mode_{name}")
    s = base.sampling
    draws = c3.number_input("Monte Carlo draws", 100, MAX_DRAWS, s.draws, 500, key=f"dy_draws_{name}")
    seed = c3.number_input("Seed", 0, 2**31 - 1, s.seed, 1, key=f"dy_seed_{name}")
    spread = c3.number_input("Price spread (SD of ln price)", 0.0, 1.0, s.price_spread, 0.05, key=f"dy_ps_{name}")
    model_unc = c3.checkbox(
        "P5-P95 ranges include model physiology",
        value=False,
        key=f"dy_model_unc_{name}",
        help=(
            "Let the P5-P95 ranges also draw the uptake model's uncertain physiology (partition "
            "coefficients, tissue volumes and flows, cardiac output, O2 consumption, ventilation, "
            "circle volume), beside the case mix and prices; slower. Method and sources: Methods "
            "and Validation pages."
        ),
    )
    horizon = [k for k in GWP_SOURCES if k != "user" and GWP_SOURCES[k].horizon_years == view.gwp_horizon_years]
    gwps = st.multiselect(
        "GWP sources drawn in the P5-P95 ranges (empty: the sidebar's source only)",
        horizon,
        default=[k for k in s.gwp_sources if k in horizon],
        format_func=lambda k: GWP_SOURCES[k].label,
        key=f"dy_gwps_{name}_{view.gwp_horizon_years}",
        help="Sources of the sidebar's GWP horizon",
    )
    e1, e2 = st.columns([1, 3])
    car = e1.number_input("Car factor (kg CO2e/km)", 0.01, 2.0, base.car_kg_per_km, 0.01, key=f"dy_car_{name}")
    car_source = e2.text_input("Source of the car factor", base.car_source, key=f"dy_cars_{name}", max_chars=300)

low, high = adh[0] / 100, adh[1] / 100
mode = min(max(mode / 100, low), high)
practice = Practice(
    flow if use_flow else None,
    dial_factor,
    "desflurane" if switch else None,
    "sevoflurane" if switch else None,
    mode,
    low,
    high,
    maintenance_o2_share=o2_pct / 100 if use_o2 else None,
)
scenario = replace(
    yv.scenario_for_view(base, view, mix, own_prices),
    practice=practice,
    sampling=Sampling(int(draws), int(seed), float(spread), tuple(gwps)),
    car_kg_per_km=float(car),
    car_source=car_source.strip() or base.car_source,
)
try:
    with st.spinner("Sampling the year..."):
        result = yv.run_year(scenario, ref, ref_key, model_unc)
except InputError as err:
    ui.show_input_error(err)
    if last_key not in ss:
        st.stop()
    scenario, result, mix = ss[last_key]
    stale = True
else:
    if not stale:
        ss[last_key] = (scenario, result, mix)
with head:
    if stale:
        st.warning(
            "These figures are the last valid result; correct the entry below to update them.",
            icon=":material/history:",
        )

    t = result.totals
    rows = result.summary.set_index("key")
    cur = result.currency
    st.subheader("The year")
    unsafe = ui.cautions.unsafe_banner(result.warnings, "the practice of this year")
    st.caption(
        f"{t['cases']:,.0f} cases; {result.n_draws:,} draws (seed {result.seed}). "
        f"Expected values under {result.inputs.gwp_label}, with the {result.range_label} under each"
        + (
            f" (the P5-P95 ranges draw the GWP sources {', '.join(ref.gwp_sources[g].label for g in gwps)}, "
            "so a value can sit near one end of its range)"
            if len(gwps) > 1
            else ""
        )
        + "."
    )
    m = st.columns(5)
    for col, (label, key, value, digits) in zip(
        m,
        [
            (f"Cost ({cur})", "cost_total", f"{t['cost_total']:,.0f}", 0),
            ("Emissions (t CO2e)", "co2e_total_t", f"{t['co2e_total_t']:,.1f}", 1),
            ("Bottles bought", "bottles_total", f"{t['bottles_total']:,.0f}", 0),
            ("CO2 absorbent (kg)", "absorbent_kg", f"{t['absorbent_kg']:,.0f}", 0),
            ("Average car (km)", "car_km", f"{t['car_km']:,.0f}", 0),
        ],
        strict=True,
    ):
        col.metric(
            label,
            value,
            help=scenario.car_source if key == "car_km" else BOTTLES_COUNTED if key == "bottles_total" else None,
        )
        col.caption(yv.range_text(rows.loc[key], digits))
    st.caption(
        f"Per case: {result.per_case['cost_total']:,.2f} {cur}, {result.per_case['co2e_total_t'] * 1000:,.1f} kg CO2e, "
        f"{sum(result.per_case[f'liquid_ml_{a}'] for a in VOLATILES):,.1f} mL liquid agent."
    )

figs = [
    ("Bottles bought per month", year_charts.monthly_bottles_figure(result.monthly)),
    ("Cost per month", year_charts.monthly_cost_figure(result.monthly, cur)),
    ("CO2e by source", year_charts.co2e_by_source_figure(t)),
    (
        "Cumulative CO2e",
        year_charts.fan_figure(result.fan, "cumulative t CO2e", "t CO2e", CO2E_COLOUR, result.range_label),
    ),
    ("Cumulative cost", year_charts.fan_figure(result.fan, "cumulative cost", cur, range_label=result.range_label)),
]
st.subheader("Charts of the year")
g1, g2 = st.columns(2)
g1.plotly_chart(figs[0][1], width="stretch", key="dy_fig_bottles")
g2.plotly_chart(figs[1][1], width="stretch", key="dy_fig_cost")
g3, g4 = st.columns(2)
g3.plotly_chart(figs[3][1], width="stretch", key="dy_fig_fan_co2e")
g4.plotly_chart(figs[4][1], width="stretch", key="dy_fig_fan_cost")
st.plotly_chart(figs[2][1], width="stretch", key="dy_fig_source")

summary = nonzero_rows(result.summary).drop(columns=["key"])
if unsafe:
    summary.insert(0, "safety", ui.cautions.UNSAFE)  # also in the CSV, which carries no inputs
st.subheader("Headline figures")
fmt.table(summary, cur)
with st.expander("Per month and per case type"):
    fmt.table(result.monthly, cur)
    fmt.table(result.by_type, cur)

ui.cautions.show_other_warnings(result.warnings)
for note in result.notes:
    st.caption(note)

edits = ui.provenance.year_edits(base, scenario, mix)
if edits:
    edited_years[name] = edits
else:
    edited_years.pop(name, None)
with edits_slot:
    others = {n: e for n, e in edited_years.items() if n != name}
    if others:
        st.caption(
            ui.md(
                "Kept for this session, not saved: your edits of "
                + "; ".join(f"'{n}' ({', '.join(e)})" for n, e in others.items())
                + ". Choose that scenario again to go on with them, and save to keep them."
            )
        )
    if edits:
        d1, d2 = st.columns([4, 1], vertical_alignment="center")
        d1.warning(
            ui.md(
                f"Edited on this page, not saved: {', '.join(edits)}. The edits stay with this scenario "
                "while you look at another one; Save below keeps them as a new version."
            ),
            icon=":material/edit_note:",
        )
        if d2.button("Discard edits", icon=":material/undo:", key="dy_discard_btn", width="stretch"):
            ss["dy_discard_pending"] = name
            st.rerun()
title = f"Department year: {scenario.name}" + (" (edited on this page)" if edits else "")
inputs = {
    "scenario": scenario.name + (f" ({', '.join(edits)} edited on this page, not as saved)" if edits else ""),
    "opened from": (
        f"saved scenario '{choice.name}', " + (f"version {version}" if version != "latest" else "latest version")
    )
    if choice.kind == "saved"
    else f"demo file {choice.path.name}",
    "safety": ui.cautions.safety_text(result.warnings),
    **ui.provenance.practice_rows(scenario.practice),
    "case mix": f"{len(mix.types)} case types, {t['cases']:,.0f} cases per year (table 'Case mix')",
    **ui.provenance.in_use(view, ref, own),
    "GWP source": result.inputs.gwp_label,
    "GWP sources drawn in the P5-P95 ranges": ", ".join(ref.gwp_sources[g].label for g in scenario.sampling.gwp_sources)
    or "the GWP source only",
    "P5-P95 ranges": result.range_label,
    "draws": result.n_draws,
    "seed": result.seed,
    "price spread (SD of ln price)": f"{scenario.sampling.price_spread:g}",
    "car factor": f"{scenario.car_kg_per_km:g} kg CO2e/km ({scenario.car_source})",
}
tables = {
    "Headline figures": summary,
    "Inputs": ui.provenance.inputs_table(inputs),
    "Per month": result.monthly,
    "Per case type": result.by_type,
    "Case mix": case_mix_to_frame(mix),
    "Warnings": ui.cautions.warnings_table(result.warnings),
    "Sources": pd.DataFrame(ref.table()),
}
with st.expander("What produced these figures", icon=":material/info:"):
    st.dataframe(tables["Inputs"], hide_index=True, width="stretch")
opened = inputs["opened from"] + (f" ({', '.join(edits)} edited on this page)" if edits else "")
prov = ui.provenance.block(
    view,
    ref,
    title,
    warnings=result.warnings,
    lowest_inspired_o2_pct=result.lowest_inspired_o2_pct,
    files=[
        input_file("scenario", opened, ui.year_store.scenario_file(scenario, "case mix")),
        input_file("case mix", f"case mix of {opened}", case_mix_to_csv(mix), len(mix.types), "case types"),
    ],
    own=own,
    settings={k: inputs[k] for k in ("draws", "seed", "price spread (SD of ln price)", "car factor")},
)


def _report(prov) -> str:
    return html_export(
        ("UNSAFE PRACTICE. " if unsafe else "") + title,
        inputs=inputs,
        tables={"Headline figures": summary, "Per month": result.monthly, "Per case type": result.by_type},
        figures=figs,
        warnings=ui.cautions.caution_lines(result.warnings),
        cautions=[ui.CAUTION, *result.notes],
        sources=tables["Sources"],
        currency=cur,
        provenance=prov,
    )


st.divider()
st.markdown("**Download this year**")
ui.downloads(f"year {scenario.name}", tables, _report, key="dy_dl", notes=tuple(result.notes), provenance=prov)


# ---- keeping the year: save, versions, files -----------------------------------------

st.divider()
k1, k2 = st.columns([3, 2])
with k1:
    st.markdown("**Save this year** (scenario and case mix, as on this page; a new version each time)")
    s1, s2, s3 = st.columns([2, 2, 1], vertical_alignment="bottom")
    ss.setdefault(f"dy_save_name_{name}", choice.name if choice.kind == "saved" else base.name)
    save_name = s1.text_input("Save as", key=f"dy_save_name_{name}", max_chars=120)
    save_note = s2.text_input("Note for this version", key="dy_save_note", placeholder="optional")
    may_save = ui.save_permission()
    if not may_save.allowed:
        st.caption(ui.md(may_save.reason))
    if (
        s3.button(
            "Save",
            type="primary",
            icon=":material/save:",
            width="stretch",
            key="dy_save_btn",
            disabled=stale or not may_save.allowed,
        )
        and may_save.allowed
    ):
        try:
            # The scenario's own prices are kept with it whether or not they were used here.
            saved_v, mix_v = ui.year_store.save(
                store, replace(scenario, prices=dict(base.prices)), mix, save_name, save_note, author=ui.author()
            )
        except InputError as err:
            ui.show_input_error(err, "Not saved")
        else:
            ss["dy_flash"] = (
                f"Saved '{save_name.strip()}' as version {saved_v} (case mix version {mix_v}). "
                "Earlier versions are kept."
            )
            ss["dy_pick_pending"] = f"{save_name.strip()}{ui.year_store.SAVED}"
            st.rerun()
    flash = ss.pop("dy_flash", None)
    if flash:
        st.success(ui.md(flash), icon=":material/check_circle:")
    if choice.kind == "saved":
        hist = store.history("scenario", choice.name)
        st.dataframe(
            pd.DataFrame(
                {
                    "version": [v.version for v in hist],
                    "saved": [when_text(v.saved_at) for v in hist],
                    "by": [author_label(v.author) for v in hist],
                    "note": [v.note for v in hist],
                }
            ),
            hide_index=True,
            width="stretch",
        )
with k2:
    st.markdown("**Files**")
    slug = ui.common._slug(scenario.name)
    f1, f2 = st.columns(2)
    f1.download_button(
        "Scenario (TOML)",
        data=ui.year_store.scenario_file(replace(scenario, prices=dict(base.prices)), f"{slug}-casemix.csv"),
        file_name=f"{slug}.toml",
        mime="application/toml",
        key="dy_dl_scenario",
        on_click="ignore",
        icon=":material/download:",
        help="The scenario as run on this page; keep its case-mix file beside it",
    )
    f2.download_button(
        "Case mix (CSV)",
        data=case_mix_to_csv(mix),
        file_name=f"{slug}-casemix.csv",
        mime="text/csv",
        key="dy_dl_casemix",
        on_click="ignore",
        icon=":material/download:",
    )
    with st.expander("Upload a scenario or a case mix", icon=":material/upload:"):
        up_s = st.file_uploader("Scenario (TOML)", type=["toml"], key="dy_upload_scenario")
        up_m = st.file_uploader(
            "Its case mix (CSV)",
            type=["csv"],
            key="dy_upload_casemix",
            help="Its plan column names plans of the dashboard: " + ", ".join(sorted(yv.plan_library())),
        )
        if (
            st.button(
                "Save the uploaded files",
                icon=":material/upload:",
                key="dy_upload_btn",
                disabled=(up_s is None and up_m is None) or not may_save.allowed,
            )
            and may_save.allowed
        ):
            try:
                saved_name, text = ui.year_store.import_files(
                    store,
                    (up_s.name, up_s.getvalue()) if up_s is not None else None,
                    (up_m.name, up_m.getvalue()) if up_m is not None else None,
                    yv.plan_library(),
                    author=ui.author(),
                )
            except InputError as err:
                st.error(ui.md(f"Not saved, the store is unchanged. {err}"), icon=":material/error:")
            else:
                ss["dy_flash"] = text
                if saved_name is not None:
                    ss["dy_pick_pending"] = saved_name + ui.year_store.SAVED
                st.rerun()
