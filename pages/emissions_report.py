"""Emissions report: a period's scope 1 anaesthetic emissions against a baseline and a target, and what drove it."""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import pandas as pd
import streamlit as st

import ui
import ui.provenance
import ui.state
from model import InputError
from model.audit.engine import audit_records
from model.base.files import Source
from model.io.purchases import load_purchases
from model.present.provenance import input_file
from model.present.report_charts import report_figures
from model.present.report_document import report_html, report_provenance
from model.report import build_report, parse_period, parse_target
from ui.common import sources_table
from ui.report_views import period_input, shown, sites_against_purchases, target_input
from ui.tables import format_help as fmt_help

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "demo_data" / "records"
DEMO_RECORDS = [DEMO / "fernhollow_2025.parquet", DEMO / "fernhollow_2026.parquet"]
DEMO_PURCHASES = [DEMO / "fernhollow_purchases_2025.csv", DEMO / "fernhollow_purchases_2026.csv"]
DEMO_SITES = DEMO / "fernhollow_sites.csv"

view = ui.page_start(
    "Emissions report",
    "Scope 1 anaesthetic emissions for a reporting period, against a "
    "baseline and a target, with what drove the change: for a sustainability report or a board.",
)
ref = ui.reference(view)

UPLOAD = "Upload files"
if ui.state.kept_files("records"):
    st.session_state.setdefault("er_source", UPLOAD)  # records uploaded on another page are used here too
source = st.radio(
    "Records",
    ["Demo records (Fernhollow General Hospital, invented, 2025 and 2026)", UPLOAD],
    key="er_source",
    horizontal=True,
)
files: list[Source] = []
purchase_files: list[Source] = []
sites_file: Source | None = None
if source.startswith("Demo"):
    # The demo files are read where they are, named as the user knows them.
    files = [Source(p.name, path=p) for p in DEMO_RECORDS]
    c1, c2 = st.columns(2)
    if c1.checkbox("Add the demo purchases (purchase-based figures)", value=True, key="er_demo_purchases"):
        purchase_files = [Source(p.name, path=p) for p in DEMO_PURCHASES]
    if c2.checkbox("Group theatres into sites (demo site file)", value=True, key="er_demo_sites"):
        sites_file = Source(DEMO_SITES.name, path=DEMO_SITES)
else:
    # Kept for the session and shared with the Record audit (ui.state.kept_uploads). With records
    # kept, the uploaders fold away so that the report's headline stays on a laptop's first screen.
    box = st.expander(
        "Record, purchases and site files", expanded=not ui.state.kept_files("records"), icon=":material/upload:"
    )
    c1, c2, c3 = box.columns(3)
    files = ui.state.kept_uploads(
        "Record files covering both periods (.csv, .parquet)",
        "er_upload",
        "records",
        multiple=True,
        types=("csv", "parquet"),
        where=c1,
    )
    purchase_files = ui.state.kept_uploads(
        "Purchases files (optional)",
        "er_upload_purchases",
        "purchases",
        multiple=True,
        types=("csv", "parquet"),
        where=c2,
    )
    site_files = ui.state.kept_uploads(
        "Site file, theatre,site (optional)", "er_upload_sites", "sites", types=("csv",), where=c3
    )
    sites_file = site_files[0] if site_files else None
# Folded (with uploads, into the uploads' own box), so that the report's headline stays on a
# laptop's first screen.
reading = st.expander("File formats and time zone", icon=":material/description:") if source.startswith("Demo") else box
with reading:
    time_zone = st.text_input(
        "Time zone of record times without a UTC offset",
        "",
        key="er_time_zone",
        placeholder="as written (e.g. Europe/London)",
        help="An IANA zone name. Times written with an offset (+01:00, Z) are read as that instant; "
        "others in this zone, across its clock changes. Empty: read as written.",
    ).strip()
    fmt_help("Case records", "Purchases", inline=True)
if not files:
    st.info("Upload record files ('Case records' under 'File formats' on this page) to build the report.")
    st.stop()


@st.cache_data(show_spinner="Auditing the records...", max_entries=4)
def audited(digest: str, ref_key: str, temperature_c: float, time_zone: str, _files, _ref):
    """The audit's case table, reading summary and absorbent note; messages name the user's files."""
    try:
        result = audit_records(_files, reference=_ref, temperature_c=temperature_c, time_zone=time_zone or None)
    except InputError as err:
        return None, str(err), ""
    return result.cases, result.report.summary(), result.absorbent_note()


@st.cache_data(show_spinner=False, max_entries=8)
def purchases_table(digest: str, ref_key: str, _files, _ref):
    """The purchases files' usable lines (one table), the messages of lines set aside, each file's lines."""
    tables, notes, lines = [], [], []
    for f in _files:
        try:
            read = load_purchases(f, _ref)
        except InputError as err:
            notes.append(str(err))
            lines.append(None)
            continue
        tables.append(read.table)
        notes += read.messages
        lines.append(len(read.table) + len(read.messages))
    return (pd.concat(tables, ignore_index=True) if tables else None), notes, lines


records_key, purchases_key = ui.files_digest(files), ui.files_digest(purchase_files)  # hashed once a run
cases, summary, absorbent_note = audited(
    records_key, ui.reference_key(view), float(view.temperature_c), time_zone, tuple(files), ref
)
if cases is None:
    ui.show_input_error(InputError("records", "the files", summary))
    st.stop()
purchases, purchase_notes, purchase_lines = (
    purchases_table(purchases_key, ui.reference_key(view), tuple(purchase_files), ref)
    if purchase_files
    else (None, [], [])
)
sites = ui.read_sites(sites_file)

starts = pd.to_datetime(cases["start"], errors="coerce").dropna()
last_year = int(starts.max().year) if len(starts) else 2026

# The headline and key figures are drawn here, above the choices that make them, so that on a
# laptop screen they are seen first.
head = st.container()
# What was read, under the headline (above it, it would push the figures off a laptop's screen).
st.caption(
    f"{summary['rows_valid']:,} rows used from {len(files)} file(s), {summary['rows_set_aside']:,} set aside "
    "(the Record audit page lists them). Cases from "
    + (f"{starts.min():%Y-%m-%d} to {starts.max():%Y-%m-%d}." if len(starts) else "no dated case.")
)
with st.container(border=True):
    st.markdown("**Period, baseline and target**")
    period_text = period_input("Reporting period", "er_period", last_year)
    use_baseline = st.checkbox("Compare with a baseline period", value=True, key="er_use_baseline")
    baseline_text = period_input("Baseline period", "er_baseline", last_year - 1) if use_baseline else None
    target_text = target_input("er_target", last_year) if use_baseline else None
    c1, c2 = st.columns(2)
    gwp_keys = [k for k in ref.gwp_sources if k != "user" or ref.gwp_sources[k].values]
    baseline_gwp = (
        c1.selectbox(
            "GWP source of the baseline",
            gwp_keys,
            index=gwp_keys.index(view.gwp_source) if view.gwp_source in gwp_keys else 0,
            key="er_baseline_gwp",
            format_func=lambda k: ref.gwp_sources[k].label,
            help="Normally the same as the sidebar's. A different one shows the change of "
            "source as its own part of the change.",
        )
        if use_baseline
        else None
    )
    site_names = sorted(set(sites.values())) if sites else []
    chosen_sites = c2.multiselect("Sites reported (none chosen: all)", site_names, key="er_sites") if sites else []

if period_text is None:
    st.info("Choose the last day of the date range.")
    st.stop()
try:
    period = parse_period(period_text, "Reporting period")
except InputError as err:
    ui.show_input_error(err)
    st.stop()
baseline, target, problems = None, None, []
try:
    baseline = parse_period(baseline_text, "Baseline period") if baseline_text else None
except InputError as err:
    problems.append(err)
try:
    target = parse_target(target_text, "Target") if target_text and baseline is not None else None
except InputError as err:
    problems.append(err)


@st.cache_resource(show_spinner=False, max_entries=16)
def cached_report(
    key: str,
    _cases,
    _period,
    _baseline,
    _ref,
    _gwp,
    _baseline_gwp,
    _purchases,
    _sites,
    _chosen,
    _target,
    _absorbent_note,
):
    """``build_report`` keyed by text naming every input (the result is never changed after)."""
    return build_report(
        _cases,
        _period,
        _baseline,
        reference=_ref,
        gwp_source=_gwp,
        baseline_gwp_source=_baseline_gwp,
        purchases=_purchases,
        sites=_sites,
        chosen_sites=_chosen,
        target=_target,
        absorbent_note=_absorbent_note,
        fields={
            "period": "Reporting period",
            "baseline": "Baseline period",
            "target": "Target",
            "site": "Sites reported",
        },
    )


report_key = "|".join(
    map(
        str,
        (
            records_key,
            purchases_key,
            sites_file and ui.files_digest([sites_file]),
            ui.reference_key(view),
            view.temperature_c,
            period.text,
            baseline and baseline.text,
            target and target.text,
            view.gwp_source,
            baseline_gwp,
            sorted(chosen_sites),
        ),
    )
)
try:
    report = cached_report(
        report_key,
        cases,
        period,
        baseline,
        ref,
        view.gwp_source,
        baseline_gwp,
        purchases,
        sites,
        tuple(chosen_sites),
        target,
        absorbent_note,
    )
except InputError as err:
    ui.show_input_error(err)
    st.stop()
extra = (
    [
        f"{len(purchase_notes)} purchase line(s) set aside; the others are used: "
        + "; ".join(purchase_notes[:5])
        + (" ..." if len(purchase_notes) > 5 else "")
    ]
    if purchase_notes
    else []
)
# A copy with this run's messages: the cached report itself is never changed.
report = replace(report, problems=problems + report.problems, cautions=report.cautions + extra)

# ---- headline ---------------------------------------------------------------------------
pr, br, d = report.period, report.baseline, report.decomposition
with head:
    st.markdown(f"#### {ui.md(report.headline())}")
    for p in report.problems:
        ui.show_input_error(p, "Not worked out")
    m = st.columns(4) + st.columns(5)
    like = report.like_for_like_baseline_t()
    delta = None if like is None else f"{pr.co2e_t - like:+,.1f} t on the baseline, like for like"
    m[0].metric(
        f"Use-based, {report.gwp_label}",
        f"{pr.co2e_t:,.1f} t CO2e",
        delta,
        delta_color="inverse",
        help=f"Against the baseline under {report.gwp_label} too; the change of GWP source is in the headline"
        if report.mixes_gwp_sources
        else None,
    )
    ar5 = pr.figures["co2e_t"].get("ar5_gwp100")
    if ar5 is not None and pr.gwp_source != "ar5_gwp100":
        m[1].metric("Use-based, IPCC AR5 GWP100", f"{ar5:,.1f} t CO2e")
    else:
        m[1].metric("Use-based, IPCC AR6 GWP100", f"{pr.figures['co2e_t']['ar6_gwp100']:,.1f} t CO2e")
    if pr.purchases is not None:
        m[2].metric(
            "Purchase-based",
            f"{pr.purchases.co2e_t(f't CO2e ({report.gwp_label})'):,.1f} t CO2e",
            help=f"Everything bought in the period's months, {report.gwp_label}",
        )
    else:
        m[2].metric("Purchase-based", "no purchases")
    m[3].metric("Fresh gas flow", view.flow(pr.figures["fgf_l_min"]), help="time-weighted over the anaesthetic time")
    m[4].metric("Cases", f"{pr.figures['cases']:,}")
    m[5].metric("Anaesthetic hours", f"{pr.figures['hours']:,.0f} h")
    m[6].metric("CO2e per case", f"{pr.figures['kg_per_case']:,.1f} kg")
    m[7].metric("CO2e per hour", f"{pr.figures['kg_per_hour']:,.1f} kg", help="per anaesthetic hour")
    m[8].metric("N2O per case", f"{pr.figures['n2o_l_per_case']:,.0f} L")
    if report.target is not None:
        (st.success if report.target.on_track else st.warning)(ui.md(report.target.sentence()))


# ---- figures ----------------------------------------------------------------------------


@st.cache_resource(show_spinner=False, max_entries=16)
def cached_figures(key: str, _report) -> dict:
    """The report's charts, built once per set of inputs (cached figures are never changed)."""
    return report_figures(_report)


charts = cached_figures(report_key, report)


def _chart(heading: str, key: str) -> None:
    st.plotly_chart(charts[heading], width="stretch", key=key)


tabs = st.tabs(
    [
        "What drove the change",
        "Figures",
        "By month and site",
        "Flow bands",
        "Use and purchases",
        "Target path",
        "Method and cautions",
    ]
)
with tabs[0]:
    if d is None:
        st.caption("Choose a baseline period with cases in the records to see what drove the change.")
    else:
        _chart("What drove the change", "er_waterfall")
        st.markdown("\n".join(f"- {ui.md(sentence)}" for _, sentence in report.sentences()))
        st.dataframe(
            report.decomposition_table(),
            hide_index=True,
            width="stretch",
            column_config={"t_co2e": st.column_config.NumberColumn("t CO2e", format="%+.2f")},
        )
        st.caption(
            "Additive LMDI-I (Ang 2005): the parts add exactly to the total change. An agent used in one "
            "period only: analytical limits of Ang and Liu 2007 (its whole change is agent mix)."
        )
with tabs[1]:
    _chart("Emissions by agent", "er_agents")
    st.dataframe(shown(report.figures_table()), hide_index=True, width="stretch")
    st.dataframe(shown(pr.by_agent), hide_index=True, width="stretch")
with tabs[2]:
    _chart("Emissions by month", "er_months")
    st.dataframe(shown(pr.by_month), hide_index=True, width="stretch")
    st.dataframe(shown(pr.by_site), hide_index=True, width="stretch")
with tabs[3]:
    _chart("Time in each flow band", "er_bands")
with tabs[4]:
    if pr.use_vs_purchase is None:
        st.caption("Add purchases files to set purchase-based figures beside the use-based ones.")
    else:
        _chart("Use-based and purchase-based", "er_purchases")
        st.dataframe(shown(pr.use_vs_purchase), hide_index=True, width="stretch")
        st.caption(
            "Gap = purchased - used: stock held over, wastage, use not recorded and, for piped N2O, "
            "losses from manifolds and pipework."
        )
        sites_against_purchases(report)
with tabs[5]:
    if report.target is None:
        st.caption("Choose a baseline and a target to see the target path.")
    else:
        _chart("Against the target path", "er_target_fig")
with tabs[6]:
    st.markdown("**Method statement**")
    st.markdown("\n".join(f"- {ui.md(line)}" for line in report.method_statement()))
    st.markdown("**Cautions**")
    st.markdown("\n".join(f"- {ui.md(line)}" for line in [ui.CAUTION, *report.cautions]))


record_rows = summary.get("file_rows") or [None] * len(files)
prov = report_provenance(
    report,
    [input_file("case records", f.name, f, n) for f, n in zip(files, record_rows, strict=True)]
    + [input_file("purchases", f.name, f, n) for f, n in zip(purchase_files, purchase_lines, strict=True)]
    + ([input_file("sites", sites_file.name, sites_file, len(sites), "theatres")] if sites_file and sites else []),
    ui.provenance.prices_text(),
    {"room temperature": f"{view.temperature_c:g} °C"},
)


def _html(prov) -> str:
    return report_html(
        report,
        list(charts.items()),
        cautions=[ui.CAUTION],
        sources=sources_table(ui.reference_key(view), ref),
        provenance=prov,
    )


ui.downloads(
    f"emissions report {pr.period.text}",
    report.tables(),
    _html,
    key="er_dl",
    notes=tuple(report.notes()),
    provenance=prov,
)
