"""Record audit: what the department's case records say it used and emitted, against purchases."""

from __future__ import annotations

from pathlib import Path

import pandas as pd
import streamlit as st

import ui
import ui.provenance
import ui.state
from model import InputError
from model.audit.engine import audit_records
from model.audit.reconcile import N2O_LOSS_WHY_NOT, check_purchases
from model.audit.result import BAND_COLUMNS, DEFAULT_HIGH_FLOW_L_MIN, DEFAULT_HIGH_FLOW_LIMIT_MIN
from model.base.files import Source
from model.io.record_files import DEFAULT_GAP_LIMIT_MIN
from model.present import case_charts as charts
from model.present.exports import html_export
from model.present.provenance import input_file
from ui import tables as fmt

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "demo_data" / "records"
DEMO_RECORDS = {
    "2025, all theatres (Parquet)": DEMO / "fernhollow_2025.parquet",
    "2026, all theatres, after a change of practice (Parquet)": DEMO / "fernhollow_2026.parquet",
    "About 30 Birch cases, other layout, with deliberate problems (CSV)": DEMO / "fernhollow_birch_cases.csv",
}
DEMO_PURCHASES = [DEMO / "fernhollow_purchases_2025.csv", DEMO / "fernhollow_purchases_2026.csv"]


#: Columns shown first in the wide audit tables (the rest follow, a scroll away).
CASE_COLUMNS_FIRST = (
    "case_id",
    "agent",
    "theatre",
    "month",
    "minutes",
    "mean_fgf_l_min",
    "liquid_agent_ml",
    "co2e_total_kg",
    "cost_total",
    "high_flow_flag",
)
SUM_COLUMNS_FIRST = (
    "theatre",
    "month",
    "agent",
    "cases",
    "mean_fgf_l_min",
    "liquid_agent_ml",
    "co2e_total_kg",
    "cost_total",
    "high_flow_cases",
)

view = ui.page_start(
    "Record audit",
    "What case records say was used and emitted, case by case, by "
    "theatre and month, and how that compares with what was bought.",
)
st.warning(
    "Records must be de-identified before upload: no names, hospital numbers or dates of "
    "birth. A case id, times, theatre, agent, flows and dial or end-tidal settings are all "
    "the audit needs.",
    icon=":material/shield_person:",
)
ss = st.session_state
ref = ui.reference(view)

UPLOAD = "Upload files"
if ui.state.kept_files("records"):
    ss.setdefault("ra_source", UPLOAD)  # records uploaded on another page are used here too
source = st.radio(
    "Records",
    ["Demo records (Fernhollow General Hospital, invented)", UPLOAD],
    key="ra_source",
    horizontal=True,
)
files: list[Source] = []
purchase_files: list[Source] = []
if source.startswith("Demo"):
    chosen = st.multiselect("Demo files", list(DEMO_RECORDS), default=list(DEMO_RECORDS), key="ra_demo")
    # Read where they are, named as the user knows them.
    files = [Source(DEMO_RECORDS[c].name, path=DEMO_RECORDS[c]) for c in chosen]
    if st.checkbox("Reconcile with the demo purchases (2025 and 2026)", value=True, key="ra_demo_purchases"):
        purchase_files = [Source(p.name, path=p) for p in DEMO_PURCHASES]
else:
    # Kept for the session and shared with the Emissions report (ui.state.kept_uploads).
    files = ui.state.kept_uploads(
        "Record files (.csv or .parquet; 'Case records' under 'File formats' on this page)",
        "ra_upload",
        "records",
        multiple=True,
        types=("csv", "parquet"),
    )
    purchase_files = ui.state.kept_uploads(
        "Purchases files (optional; .csv or .parquet; all are reconciled together)",
        "ra_upload_purchases",
        "purchases",
        multiple=True,
        types=("csv", "parquet"),
    )
fmt.format_help("Case records", "Purchases")

with st.expander("Audit settings"):
    c1, c2, c3 = st.columns(3)
    gap_limit = c1.number_input(
        "Longest interval counted [min]",
        0.5,
        240.0,
        DEFAULT_GAP_LIMIT_MIN,
        0.5,
        key="ra_gap",
        help="Longer gaps between two samples of a case are reported and left out of every sum, never filled in.",
    )
    high_flow = c2.number_input(
        "High flow above [L/min]",
        0.5,
        20.0,
        float(DEFAULT_HIGH_FLOW_L_MIN),
        0.5,
        key="ra_high",
        help="Baker 1994: flows above 2 L/min are high flow.",
    )
    high_limit = c3.number_input(
        "Flag high-flow runs of at least [min]", 1.0, 600.0, DEFAULT_HIGH_FLOW_LIMIT_MIN, 1.0, key="ra_high_limit"
    )
    time_zone = st.text_input(
        "Time zone of times without a UTC offset",
        "",
        key="ra_time_zone",
        placeholder="as written (e.g. Europe/London)",
        help="An IANA zone name. Times written with an offset (+01:00, Z) are read as that instant; "
        "others in this zone, across its clock changes. Empty: read as written.",
    ).strip()

if not files:
    st.info("Choose demo files or upload record files to start the audit.")
    st.stop()


def run_audit(files: tuple[Source, ...], purchases: tuple[Source, ...], settings: tuple, _ref, _progress):
    """Audit the files and reconcile with every purchases file; every message names the user's files.

    Returns (audit result, the purchases check: ``model.audit.reconcile.check_purchases``).
    """
    gap, high, limit, gwp, temp, zone = settings
    result = audit_records(
        files,
        reference=_ref,
        gwp_source=gwp,
        temperature_c=temp,
        gap_limit_min=gap,
        high_flow_l_min=high,
        high_flow_limit_min=limit,
        progress=_progress,
        time_zone=zone or None,
    )
    return result, check_purchases(purchases, result, _ref)


settings = (
    float(gap_limit),
    float(high_flow),
    float(high_limit),
    view.gwp_source,
    float(view.temperature_c),
    time_zone,
)
cache_key = (ui.files_digest(files, purchase_files), settings, ui.reference_key(view))
# Results are kept per session (the last few), so moving between tabs does not re-run the audit;
# st.cache_data cannot hold it because the progress bar is drawn while the audit runs.
cache = ss.setdefault("ra_results", {})
if cache_key not in cache:
    bar = st.progress(0.0, text="Auditing the records...")

    def _progress(fraction: float, text: str) -> None:
        bar.progress(min(max(fraction, 0.0), 1.0), text=text)

    try:
        cache[cache_key] = run_audit(tuple(files), tuple(purchase_files), settings, ref, _progress)
    except InputError as err:
        bar.empty()
        ui.show_input_error(err)
        st.stop()
    bar.empty()
    while len(cache) > 3:
        cache.pop(next(iter(cache)))
result, bought = cache[cache_key]
recon, purchase_notes, costs, coverage = bought.recon, bought.notes, bought.costs, bought.coverage

rep = result.report
summary = rep.summary()
total = result.total
m = st.columns(3) + st.columns(3)
m[0].metric("Cases", f"{int(total['cases']):,}")
m[1].metric("Rows used", f"{summary['rows_valid']:,}", help=f"{summary['rows_read']:,} rows read")
m[2].metric("Rows set aside", f"{summary['rows_set_aside']:,}")
m[3].metric("Liquid agent", f"{total['liquid_agent_ml']:,.0f} mL")
m[4].metric(
    f"CO2e ({view.co2e_unit})", view.co2e_number(total["co2e_total_kg"]), help=view.co2e(total["co2e_total_kg"])
)
m[5].metric("Cost", view.money(total["cost_total"]))
st.caption(
    f"GWP source: {result.gwp_label}. Every delivered gram counts as emitted (no uptake model). "
    f"{int(total['high_flow_cases']):,} case(s) ran {high_limit:g} min or more above {high_flow:g} L/min. "
    + (
        ""
        if pd.isna(total["time_weighted_fgf_l_min"])
        else f"Time-weighted fresh gas flow {total['time_weighted_fgf_l_min']:,.2f} L/min. "
    )
    + f"CO2 absorbent, estimated: {total['absorbent_g'] / 1000:,.1f} kg, {view.money(total['cost_absorbent'])} "
    f"(not in the cost above).",
    help="Absorbent: " + result.absorbent_note(),
)

ui.provenance.show(view, ref)

with st.expander(
    f"Checks: {summary['rows_set_aside']:,} row(s) set aside, {summary['gaps']:,} gap(s)",
    expanded=summary["rows_set_aside"] > 0 or summary["gaps"] > 0,
):
    kinds = pd.DataFrame(
        [(fmt.problem_words(k), v) for k, v in summary["set_aside_by_kind"].items() if v],
        columns=["problem", "rows set aside"],
    )
    if len(kinds):
        fmt.table(kinds, width="content")
        fmt.table(
            fmt.issue_messages(rep.issues[["file", "row", "kind", "column", "value", "message"]]),
            height=min(35 * (len(rep.issues) + 1) + 3, 300),
        )
    else:
        st.caption("Every row passed the checks.")
    if summary["gaps"]:
        st.caption(
            f"Gaps over {summary['gap_limit_min']:g} min are not filled: "
            f"{summary['gap_minutes_not_counted']:,.0f} min are left out of the sums."
        )
        fmt.table(rep.gap_list[["file", "row", "case_id", "minutes"]])
    for note in summary["notes"]:
        st.caption(note)

cases = result.cases
figs: list = []  # (heading, figure) for the HTML report
tab_cases, tab_bands, tab_month, tab_recon = st.tabs(
    ["Per case", "Flow bands by theatre", "Monthly trend", "Purchases"]
)
with tab_cases:
    fig = charts.agent_spread_figure(cases)
    if fig is not None:
        st.plotly_chart(fig, width="stretch", key="ra_hist")
        figs.append(("Liquid agent per case", fig))
    fmt.table(cases, view.currency, height=300, first=CASE_COLUMNS_FIRST)
with tab_bands:
    bands = result.bands_by_theatre()
    fig = charts.flow_bands_figure(bands)
    st.plotly_chart(fig, width="stretch", key="ra_bands")
    figs.append(("Flow bands by theatre", fig))
    by_theatre = result.by("theatre")
    fmt.table(by_theatre, view.currency, first=SUM_COLUMNS_FIRST)
    st.caption(
        "By theatre and month: the time-weighted fresh gas flow (each flow weighted by the minutes it "
        "held) beside the minutes in each flow band."
    )
    fmt.table(
        result.by("theatre_month")[["theatre", "month", "cases", "time_weighted_fgf_l_min", *BAND_COLUMNS]],
        view.currency,
    )
with tab_month:
    by_month = result.by("month")
    fig = charts.monthly_co2e_figure(by_month, ui.common.CO2E_UNITS[view.co2e_unit], view.co2e_unit)
    st.plotly_chart(fig, width="stretch", key="ra_month")
    figs.append(("CO2e by month", fig))
    by_agent = result.by("agent")
    fmt.table(by_month, view.currency, first=SUM_COLUMNS_FIRST)
    fmt.table(by_agent, view.currency, first=SUM_COLUMNS_FIRST)
with tab_recon:
    if purchase_notes:
        more = len(purchase_notes) - 20
        st.warning(
            f"{len(purchase_notes)} purchase line(s) set aside; the others are used:\n\n"
            + "\n".join(f"- {ui.md(m)}" for m in purchase_notes[:20])
            + (f"\n- ... and {more} more" if more > 0 else ""),
            icon=":material/warning:",
        )
    fmt.table(costs, view.currency)
    st.caption(
        f"Cost by item over the whole period, purchases priced with the same prices. The absorbent row "
        f"is {result.absorbent_note()}"
    )
    if recon is None:
        st.caption("Add a purchases file ('Purchases' under 'File formats' above) to compare with what was bought.")
    else:
        totals = recon[recon["month"] == "all"]
        st.caption(
            "Purchases reconciled together: "
            + ", ".join(f"{ui.md(n)} ({rows:,} lines)" for n, rows in bought.files)
            + "."
        )
        if coverage["partial"]:
            # A few cases against a hospital's purchases: say what the records cover, and no loss.
            st.warning(ui.md(coverage["message"]), icon=":material/rule:")
        else:
            st.caption(ui.md(coverage["message"]))
        loss, share = bought.n2o_loss()
        if loss:
            st.metric(
                "N2O apparent loss",
                loss,
                share or None,
                delta_color="off",
                help=N2O_LOSS_WHY_NOT[0].upper() + N2O_LOSS_WHY_NOT[1:] + "."
                if coverage["partial"]
                else "Purchased minus recorded N2O: losses in pipes and manifolds, part-full cylinders "
                "returned, and use not in the records.",
            )
        with st.expander("Coverage by month and theatre", expanded=coverage["partial"]):
            fmt.table(coverage["by_month"].rename(columns={"bought": "purchases", "has_records": "case records"}))
        long = totals.melt(
            id_vars=["item", "unit"], value_vars=["purchased", "recorded"], var_name="source", value_name="amount"
        )
        long["item"] = long["item"].str.replace("_", " ") + " (" + long["unit"] + ")"
        fig = charts.purchased_recorded_figure(long)
        st.plotly_chart(fig, width="stretch", key="ra_recon")
        figs.append(("Purchased and recorded", fig))
        fmt.table(recon, view.currency)
        st.caption("Months differ by stock held over; the 'all' row of each item is the fairer comparison.")

tables = {
    "Cases": cases,
    "By theatre": result.by("theatre"),
    "By month": result.by("month"),
    "By agent": result.by("agent"),
    "By theatre and month": result.by("theatre_month"),
    "Cost by item": costs,
    "Set-aside rows": rep.issues,
    "Gaps": rep.gap_list,
}
if recon is not None:
    tables["Purchases"] = recon
    tables["Record coverage"] = coverage["by_month"]
if purchase_notes:
    tables["Purchase lines set aside"] = pd.DataFrame({"message": purchase_notes})
inputs = {
    "files": ", ".join(rep.files),
    "purchases": ", ".join(n for n, _ in bought.files) or "none",
    "record coverage": coverage["message"] if recon is not None else "no purchases to compare",
    "GWP source": result.gwp_label,
    "room temperature": f"{view.temperature_c:g} °C",
    "longest interval counted": f"{gap_limit:g} min",
    "times without a UTC offset": f"read in {time_zone}" if time_zone else "read as written",
    "high flow above": f"{high_flow:g} L/min",
    "cases": f"{int(total['cases']):,}",
    "rows used": f"{summary['rows_valid']:,}",
    "rows set aside": f"{summary['rows_set_aside']:,}",
    "liquid agent": f"{total['liquid_agent_ml']:,.0f} mL",
    "CO2e": view.co2e(total["co2e_total_kg"]),
    "cost": view.money(total["cost_total"]),
    **ui.provenance.in_use(view, ref),
}


row_counts = rep.file_rows if len(rep.file_rows) == len(files) else [None] * len(files)
prov = ui.provenance.block(
    view,
    ref,
    "Record audit",
    files=[input_file("case records", f.name, f, n) for f, n in zip(files, row_counts, strict=True)]
    + [input_file("purchases", f.name, f, n) for f, (_, n) in zip(purchase_files, bought.files, strict=True)],
    settings={
        "longest interval counted": f"{gap_limit:g} min",
        "high flow above": f"{high_flow:g} L/min",
        "flag high-flow runs of at least": f"{high_limit:g} min",
        "record coverage": coverage["message"] if coverage else "no purchases to compare",
    },
)


def _report(prov) -> str:
    shown = {"By theatre": tables["By theatre"], "By month": tables["By month"], "By agent": tables["By agent"]}
    if recon is not None:
        shown["Purchases"] = recon
    return html_export(
        "Record audit",
        inputs=inputs,
        tables=shown,
        figures=figs,
        cautions=[ui.CAUTION, "Every delivered gram counts as emitted (no uptake model)."],
        sources=pd.DataFrame(ref.table()),
        currency=view.currency,
        provenance=prov,
    )


ui.downloads("record audit", tables, _report, key="ra_dl", provenance=prov)
