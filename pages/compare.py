"""Compare: saved plans side by side, with differences against a baseline."""

from __future__ import annotations

from dataclasses import replace
from typing import NamedTuple

import pandas as pd
import streamlit as st

import ui
import ui.cautions
import ui.provenance
from model import InputError
from model.case import CaseResult
from model.cautions import Caution, is_unsafe, severity_of
from model.io.plans import plan_to_toml
from model.present import case_charts as charts
from model.present.exports import html_export
from model.present.provenance import input_file
from model.present.readable import percent_change_text, signed_text
from ui import tables as fmt

view = ui.page_start(
    "Compare",
    "Saved plans side by side. The first plan is the baseline; every "
    "other plan shows its difference from it, in units and in per cent.",
)
store = ui.get_store()
ref = ui.reference(view)
ref_key = ui.reference_key(view)

FIGURES = [
    ("Liquid agent", "liquid_agent_ml", "mL"),
    ("Bottles", "bottles", "bottles"),
    ("CO2e, total", "co2e_total_kg", "kg CO2e"),
    ("CO2e, agent", "co2e_agent_kg", "kg CO2e"),
    ("CO2e, nitrous oxide", "co2e_nitrous_oxide_kg", "kg CO2e"),
    ("Cost, total", "cost_total", "currency"),
    ("Oxygen", "oxygen_l", "L"),
    ("Medical air", "air_l", "L"),
    ("Nitrous oxide", "nitrous_oxide_l", "L"),
    ("CO2 absorbent", "absorbent_g", "g"),
    ("MAC-hours, end-tidal", "end_tidal_mac_hours", "MAC-h"),
    ("MAC-hours, dial-based", "mac_hours", "MAC-h"),
    ("Duration", "duration_min", "min"),
    ("Lowest predicted inspired O2", "min_inspired_o2_pct", "%"),
]


#: Earlier versions of each plan offered for comparison, besides its latest.
EARLIER_VERSIONS = 9


def _pct(new: float, old: float) -> float | None:
    return None if abs(old) < 1e-12 else (new - old) / old * 100.0


def _delta_text(new: float, old: float, unit: str, digits: int = 1) -> str | None:
    """The change for a metric: "+1.2 mL (+5 %)"; None when it shows as no change at these decimals."""
    d = signed_text(new - old, digits=digits)
    if d == "0":
        return None
    pct = percent_change_text(new, old)
    return d + (f" {unit}" if unit else "") + (f" ({pct})" if pct else "")


tab_plans, tab_year = st.tabs(["Case plans", "Year scenarios"])


class _Charts(NamedTuple):
    """The charts' tables, one column per plan, and the figures built from them."""

    cost: pd.DataFrame
    co2e: pd.DataFrame
    use: pd.DataFrame
    figures: list


def _compare_plans() -> None:
    results = _computed_plans()
    if results is None or len(results) < 2:
        return
    scale = ui.common.CO2E_UNITS[view.co2e_unit]
    unsafe = [name for name, res in results.items() if is_unsafe(res.warnings)]
    _show_against_baseline(results, scale, unsafe)
    table = _side_by_side(results, scale, unsafe)
    st.subheader("Side by side")
    _show_side_by_side(table, list(results))
    charts_ = _charts(results, scale)
    st.subheader("Charts")
    g1, g2 = st.columns(2)
    g1.plotly_chart(charts_.figures[0][1], width="stretch", key="cmp_fig_cost")
    g2.plotly_chart(charts_.figures[1][1], width="stretch", key="cmp_fig_co2e")
    st.plotly_chart(charts_.figures[2][1], width="stretch", key="cmp_fig_use")

    warnings = [Caution(f"{name}: {w}", severity_of(w)) for name, res in results.items() for w in res.warnings]
    ui.cautions.show_other_warnings(warnings)
    _offer_downloads(results, table, charts_, warnings, unsafe)


def _computed_plans() -> dict[str, CaseResult] | None:
    """The plans chosen to compare, computed (in the order chosen); None before two are chosen."""
    names = store.names("plan")
    if len(names) < 2:
        st.info("Save at least two plans on the Case plan page to compare them.")
        return None
    # Each plan's latest version by its name, and its earlier versions (the last few) by
    # name and number, so a plan can be set against what it was before a change.
    versions: dict[str, tuple[str, int | None]] = {name: (name, None) for name in names}
    for name in names:
        for v in store.history("plan", name)[1 : EARLIER_VERSIONS + 1]:
            versions.setdefault(f"{name} · version {v.version}", (name, v.version))
    chosen = st.multiselect(
        "Plans to compare (the first is the baseline)",
        list(versions),
        default=names[:2],
        key="cmp_plans",
        max_selections=8,
        help=f"A plan's name alone is its latest version; its {EARLIER_VERSIONS} versions "
        "before that are listed by number.",
    )
    if len(chosen) < 2:
        st.warning("Choose two or more plans.")
        return None
    results = {}
    with st.spinner("Computing the plans..."):
        for label in chosen:
            try:
                # The prices in use on every page, not a plan file's own (ui/provenance.py).
                plan = replace(ui.apply_settings(store.load_plan(*versions[label]), view), prices={})
                results[label] = ui.compute_cached(plan_to_toml(plan), ref_key, ref)
            except InputError as err:
                ui.show_input_error(err, f"'{label}'")
    return results


def _show_against_baseline(results: dict[str, CaseResult], scale: float, unsafe: list[str]) -> None:
    """The unsafe banner, then a card for each plan with its differences from the baseline."""
    base_name, base = next(iter(results.items()))
    bt = base.totals
    st.subheader("Against the baseline")
    ui.provenance.show(view, ref)
    if unsafe:
        ui.cautions.unsafe_banner(
            [Caution(f"{name}: {w}", severity_of(w)) for name, res in results.items() for w in res.warnings],
            ", ".join(f"'{n}'" for n in unsafe),
        )
    st.caption(
        f"Baseline: **{ui.md(base_name)}** ({ref.agents[base.plan.agent].label}, "
        f"{bt['duration_min']:.0f} min). Green is less used, emitted or spent."
    )
    for name, res in list(results.items())[1:]:
        with st.container(border=True):
            _plan_card(name, res, bt, scale)


def _plan_card(name: str, res: CaseResult, bt: dict, scale: float) -> None:
    """One plan's figures, each with its difference from the baseline totals ``bt``."""
    t = res.totals
    flag = f" — :red[**{ui.cautions.UNSAFE}**]" if is_unsafe(res.warnings) else ""
    st.markdown(f"**{ui.md(name)}** — {ref.agents[res.plan.agent].label}, {t['duration_min']:.0f} min{flag}")
    c = st.columns(5)
    c[0].metric(
        "Liquid agent",
        f"{t['liquid_agent_ml']:.1f} mL",
        _delta_text(t["liquid_agent_ml"], bt["liquid_agent_ml"], "mL"),
        delta_color="inverse",
    )
    c[1].metric(
        f"Emissions ({view.co2e_unit})",
        view.co2e_number(t["co2e_total_kg"]),
        _delta_text(t["co2e_total_kg"] * scale, bt["co2e_total_kg"] * scale, "", 2),
        delta_color="inverse",
    )
    c[2].metric(
        f"Cost ({res.currency})",
        f"{t['cost_total']:,.2f}",
        _delta_text(t["cost_total"], bt["cost_total"], "", 2),
        delta_color="inverse",
    )
    c[3].metric(
        "Bottles", f"{t['bottles']:.2f}", _delta_text(t["bottles"], bt["bottles"], "", 2), delta_color="inverse"
    )
    # End-tidal: lowering the flow changes the depth reached, not the dial (which it raises).
    c[4].metric(
        "End-tidal MAC-h",
        f"{t['end_tidal_mac_hours']:.2f}",
        _delta_text(t["end_tidal_mac_hours"], bt["end_tidal_mac_hours"], "", 2),
        delta_color="off",
        help="End-tidal MAC multiple over time, the depth reached",
    )
    c[4].caption(f"Dial-based: {t['mac_hours']:.2f} MAC-h")


#: What the side-by-side table's plan columns show (one column per plan, so they fit a laptop).
SIDE_BY_SIDE = {"Figures": "", "Difference from the baseline": ": difference", "Difference %": ": difference %"}


def _show_side_by_side(table: pd.DataFrame, names: list[str]) -> None:
    """The side-by-side table on the page: figure and unit, then one column per plan.

    The plan columns show the figures, or each plan's difference from the baseline (the first
    plan), in units or in %; the downloads carry all of them. A column is as wide as its share
    of the page, its heading the plan's name (the whole name in its help).
    """
    shown = st.radio("Show", list(SIDE_BY_SIDE), horizontal=True, key="cmp_side_by_side", label_visibility="collapsed")
    suffix = SIDE_BY_SIDE[shown]
    plans = names if not suffix else names[1:]
    columns = {f"{n}{suffix}": n for n in plans}
    view_table = table[["figure", "unit", *columns, *(["safety"] if "safety" in table.columns else [])]]
    view_table = view_table.rename(columns=columns)
    width = max(90, (820 - 230) // max(len(plans), 1))  # px: the main column of a 1366 px laptop
    fmt.table(
        view_table,
        view.currency,
        # Figures to four significant figures: a case's emissions in t CO2e are small numbers.
        config={
            n: st.column_config.NumberColumn(
                n,
                format="%+.4g" if suffix == ": difference" else "%+.0f %%" if suffix else "%.4g",
                width=width,
                help=n + ("" if not suffix else f", {shown.lower()} ({names[0]})"),
            )
            for n in plans
        },
    )
    if suffix and len(names) > 1:
        st.caption(ui.md(f"Baseline: {names[0]}, the first plan chosen."))


def _side_by_side(results: dict[str, CaseResult], scale: float, unsafe: list[str]) -> pd.DataFrame:
    """The figures of every plan, and each plan's difference from the baseline (units and %)."""
    bt = next(iter(results.values())).totals
    rows = []
    for label, key, unit in FIGURES:
        # Emissions in the unit chosen in the sidebar, like the cards above.
        factor, unit = (scale, view.co2e_unit) if unit == "kg CO2e" else (1.0, unit)
        row = {"figure": label, "unit": view.currency if unit == "currency" else unit}
        for name, res in results.items():
            row[name] = float(res.totals[key]) * factor
        for name, res in list(results.items())[1:]:
            row[f"{name}: difference"] = float(res.totals[key] - bt[key]) * factor
            row[f"{name}: difference %"] = _pct(float(res.totals[key]), float(bt[key]))
        rows.append(row)
    table = pd.DataFrame(rows)
    if unsafe:
        table["safety"] = f"{ui.cautions.UNSAFE}: " + ", ".join(unsafe)
    return table


def _charts(results: dict[str, CaseResult], scale: float) -> _Charts:
    """Cost by item, emissions by source and what each plan uses, one bar per plan."""
    base = next(iter(results.values()))
    cost_df = pd.DataFrame({"item": base.cost_by_item()["item"]})
    co2e_df = pd.DataFrame({"source": ["Volatile agent", "Nitrous oxide"]})
    use_df = pd.DataFrame(
        {
            "item": [
                "Liquid agent (mL)",
                "Oxygen (10 L)",
                "Medical air (10 L)",
                "Nitrous oxide (10 L)",
                "CO2 absorbent (10 g)",
            ]
        }
    )
    for name, res in results.items():
        t = res.totals
        cost_df[name] = res.cost_by_item().iloc[:, 1].to_numpy()
        co2e_df[name] = [t["co2e_agent_kg"] * scale, t["co2e_nitrous_oxide_kg"] * scale]
        use_df[name] = [
            t["liquid_agent_ml"],
            t["oxygen_l"] / 10,
            t["air_l"] / 10,
            t["nitrous_oxide_l"] / 10,
            t["absorbent_g"] / 10,
        ]
    figs = [
        ("Cost by item", charts.grouped_bars(cost_df, "item", list(results), "Cost by item", view.currency)),
        (
            "Emissions by source",
            charts.grouped_bars(co2e_df, "source", list(results), "Emissions by source", view.co2e_unit),
        ),
        ("What each plan uses", charts.grouped_bars(use_df, "item", list(results), "What each plan uses")),
    ]
    return _Charts(cost_df, co2e_df, use_df, figs)


def _offer_downloads(
    results: dict[str, CaseResult], table: pd.DataFrame, charts_: _Charts, warnings: list, unsafe: list[str]
) -> None:
    """The comparison's tables and its report, to download."""
    base_name, base = next(iter(results.items()))
    sources = pd.DataFrame(ref.table())
    tables = {"Comparison": table, "Cost by item": charts_.cost, "Emissions by source": charts_.co2e}
    # "Plan 2 phases", not the plan's name cut to a sheet name's 31 characters: each sheet's
    # rows name their plan, and the block names every plan with its number.
    for i, (name, res) in enumerate(results.items(), start=1):
        tables[f"Plan {i} phases"] = res.phases.assign(plan=name)
    tables["Warnings"] = ui.cautions.warnings_table(warnings)
    tables["Sources"] = sources
    inputs = {
        "baseline": base_name,
        "safety": "; ".join(f"{n}: {ui.cautions.safety_text(r.warnings)}" for n, r in results.items()),
        "compared": ", ".join(list(results)[1:]),
        "GWP source": base.gwp_label,
        "room temperature": f"{view.temperature_c:g} °C",
        **ui.provenance.in_use(view, ref),
    }
    prov = ui.provenance.block(
        view,
        ref,
        "Plan comparison: " + ", ".join(results),
        warnings=warnings,
        lowest_inspired_o2_pct=min(float(r.totals["min_inspired_o2_pct"]) for r in results.values()),
        files=[
            input_file(
                f"plan {i}" + (" (baseline)" if i == 1 else ""),
                f"saved plan '{name}'" + ("" if " · version " in name else ", latest version"),
                plan_to_toml(r.plan),
                len(r.plan.phases),
                "phases",
            )
            for i, (name, r) in enumerate(results.items(), start=1)
        ],
    )

    def _report(prov) -> str:
        return html_export(
            ("UNSAFE PRACTICE. " if unsafe else "") + "Plan comparison",
            inputs=inputs,
            tables={"Side by side": table},
            figures=charts_.figures,
            warnings=ui.cautions.caution_lines(warnings),
            cautions=[ui.CAUTION],
            sources=sources,
            currency=view.currency,
            provenance=prov,
        )

    st.divider()
    st.markdown("**Download this comparison**")
    ui.downloads("plan comparison", tables, _report, key="cmp_dl", provenance=prov)


with tab_plans:
    _compare_plans()

with tab_year:
    # The year part of the project fills this tab from ui/year_compare.py (a function
    # ``render(view)``); until then it explains where year scenarios are compared.
    try:
        from ui.year_compare import render as render_year
    except ImportError:
        st.info(
            "Year scenarios (a department's case mix under two practices) are compared on the Department year page.",
            icon=":material/calendar_month:",
        )
    else:
        render_year(view)
