"""Trends: is practice changing? Monthly measures on control charts, their signals, a programme's effect."""

from __future__ import annotations

from pathlib import Path

import streamlit as st

import ui
import ui.state
from model import InputError
from model.audit.engine import audit_records
from model.base.files import Source
from model.present.trend_charts import control_chart_figure, trends_html
from model.trends import CHART_MEASURES, MEASURES, build_trends

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "demo_data" / "records"
DEMO_RECORDS = [DEMO / "fernhollow_2025.parquet", DEMO / "fernhollow_2026.parquet"]
DEMO_SITES = DEMO / "fernhollow_sites.csv"
#: The invented Fernhollow programme start (a date typed in; the demo files do not carry it).
DEMO_CHANGE = "2026-01"

view = ui.page_start(
    "Trends",
    "Is practice changing? Each month's measures on a control chart, the signals that tell a real "
    "change from noise, and what a programme did against the line before it.",
)
ref = ui.reference(view)

source = st.radio(
    "Records",
    ["Demo records (Fernhollow General Hospital, invented, 2025 and 2026)", "Upload files"],
    key="tr_source",
    horizontal=True,
)
sites_file: Source | None = None
if source.startswith("Demo"):
    files = [Source(p.name, path=p) for p in DEMO_RECORDS]
    sites_file = Source(DEMO_SITES.name, path=DEMO_SITES)
    default_change = DEMO_CHANGE
else:
    # Kept for the session and shared with the Record audit and the Emissions report.
    c1, c2 = st.columns(2)
    files = ui.state.kept_uploads(
        "Record files (.csv, .parquet)", "tr_upload", "records", multiple=True, types=("csv", "parquet"), where=c1
    )
    site_files = ui.state.kept_uploads(
        "Site file, theatre,site (optional)", "tr_upload_sites", "sites", types=("csv",), where=c2
    )
    sites_file = site_files[0] if site_files else None
    default_change = ""
if not files:
    st.info(
        "Upload record files (their format: File formats, 'Case records', in the documentation) to see their trends."
    )
    st.stop()


@st.cache_data(show_spinner="Auditing the records...", max_entries=4)
def audited(digest: str, ref_key: str, gwp: str, _files, _ref):
    """The audit's case table, or the message of a file that cannot be read."""
    try:
        return audit_records(_files, reference=_ref, gwp_source=gwp).cases, ""
    except InputError as err:
        return None, str(err)


records_key = ui.files_digest(files)  # hashed once a run
cases, problem = audited(records_key, ui.reference_key(view), view.gwp_source, tuple(files), ref)
if cases is None:
    ui.show_input_error(InputError("records", "the files", problem))
    st.stop()
sites = ui.read_sites(sites_file)

charts_area = st.container()
with st.container(border=True):
    c1, c2, c3 = st.columns(3)
    change = c1.text_input(
        "Programme start (first month, YYYY-MM; empty: none)",
        value=default_change,
        key="tr_change",
        help="Limits are worked out before and from this month, and the programme's effect is fitted around it."
        + (" The demo's start, January 2026, is invented." if default_change else ""),
    ).strip()
    level = c2.selectbox("Series", ["department", "site", "theatre"], key="tr_level")
    shown = c3.multiselect(
        "Measures",
        list(CHART_MEASURES),
        default=["co2e_kg_per_case", "co2e_t", "share_at_or_under_1_l_min", "high_flow_case_share"],
        format_func=CHART_MEASURES.get,
        key="tr_measures",
    )
if not shown:
    charts_area.info("Choose at least one measure.")
    st.stop()


@st.cache_resource(show_spinner=False, max_entries=16)
def cached_trends(key: str, _cases, change, level, _sites, measures):
    """``build_trends`` keyed by text naming every input (the result is never changed after)."""
    return build_trends(_cases, change, level, _sites, measures, where="Programme start")


try:
    trends = cached_trends(
        f"{records_key}|{ui.reference_key(view)}|{view.gwp_source}|{change}|{level}|{sorted((sites or {}).items())}",
        cases,
        change or None,
        level,
        sites,
        tuple(shown),
    )
except InputError as err:
    with charts_area:
        ui.show_input_error(err)
    st.stop()

with charts_area:
    groups = sorted(trends.charts["group"].unique())
    group = groups[0] if len(groups) == 1 else st.selectbox(level.capitalize(), groups, key="tr_group")
    for m in shown:
        chart = trends.charts[(trends.charts["group"] == group) & (trends.charts["measure"] == m)]
        st.plotly_chart(control_chart_figure(chart, trends.effects.get((group, m))), key=f"tr_fig_{m}")
    st.subheader("Signals")
    words = [w for w in trends.signals if group == "department" or f"({group})" in w]
    for line in words or ["None: every month is within its limits, with no run, trend or pair near a limit."]:
        st.markdown("- " + ui.md(line))
    st.subheader("Run-chart checks")
    for (g, m), r in trends.run_checks.items():
        if g == group:
            verdict = "signal" if r["signal"] else "no signal"
            st.markdown(
                ui.md(
                    f"- {CHART_MEASURES[m]}: longest run {r['longest_run']} (more than {r['run_limit']} signals), "
                    f"crossings {r['crossings']} (fewer than {r['crossings_limit']} signals): {verdict}."
                )
            )
    st.caption("Anhøj J, Olesen AV, PLoS One 2014;9(11):e113825. Definitions and rules: docs/trends.md.")
    if trends.effects:
        st.subheader(f"Did the programme work? (from {trends.change_month})")
        for (g, m), r in trends.effects.items():
            if g == group:
                for line in r.sentences(CHART_MEASURES[m], MEASURES[m][0]):
                    st.markdown("- " + ui.md(line))
    for note in trends.notes:
        st.info(note)
    ui.downloads(
        "trends",
        {"Charts": trends.charts, "Monthly measures": trends.measures},
        lambda: trends_html(trends, ui.CAUTION, ", ".join(f.name for f in files)),
        key="tr_downloads",
    )
