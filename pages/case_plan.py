"""Case plan: edit one case (patient, agent, phases) and see what it consumes, costs and emits."""

from __future__ import annotations

import re
from dataclasses import replace

import pandas as pd
import streamlit as st

import ui
import ui.cautions
import ui.provenance
import ui.state
from model import InputError
from model.io.plans import plan_from_dict, plan_to_dict, plan_to_toml
from model.plan import CasePlan
from model.present import case_charts as charts
from model.present.exports import html_export
from model.present.provenance import input_file
from model.present.readable import field_words, when_text
from model.reference import VOLATILES
from model.store.access import author_label
from ui import tables as fmt

view = ui.page_start(
    "Case plan",
    'Build one case phase by phase. Figures update as you type; numbers may carry units ("500 mL/min", "1.5 h").',
)
store = ui.get_store()
ref = ui.reference(view)
ref_key = ui.reference_key(view)
ss = st.session_state

COLUMNS = {"phase": "name", "duration": "duration", "O2": "o2", "air": "air", "N2O": "n2o"}
CONTROL_LABELS = {"dial": "vaporizer dial (%)", "target": "end-tidal target (x MAC)"}


# ---- loading a plan into the widgets ---------------------------------------------------


def _editor_frame(plan: CasePlan) -> pd.DataFrame:
    rows = []
    for p in plan.phases:
        rows.append(
            {
                "phase": p.name,
                "duration": f"{p.minutes:g} min",
                "O2": view.flow(p.oxygen_l_min),
                "air": view.flow(p.air_l_min),
                "N2O": view.flow(p.nitrous_oxide_l_min),
                "control": p.mode,
                "setting": f"{p.dial_pct:g} %" if p.dial_pct is not None else f"{p.target_mac:g}",
            }
        )
    return pd.DataFrame(rows, columns=["phase", "duration", "O2", "air", "N2O", "control", "setting"])


def _load(plan: CasePlan, origin: str) -> None:
    ss["cp_base"] = plan
    ss["cp_origin"] = origin
    ss["cp_name"] = plan.name
    ss["cp_agent"] = plan.agent
    ss["cp_weight"] = f"{plan.patient.weight_kg:g} kg"
    ss["cp_age"] = f"{plan.patient.age_years:g} year"
    ss["cp_floor"] = f"{plan.settings.inspired_o2_floor * 100:g} %"
    ss["cp_sevo_min"] = f"{plan.settings.sevoflurane_min_flow_l_min:g} L/min"
    ss["cp_capture"] = f"{plan.settings.capture_efficiency * 100:g} %"
    ss["cp_editor_df"] = _editor_frame(plan)
    ss["cp_editor_unit"] = view.flow_unit
    ss["cp_rev"] = ss.get("cp_rev", 0) + 1
    ss["cp_last_plan"] = ui.apply_settings(plan, view)


def _open_selected() -> None:
    name = ss.get("cp_open_name")
    version = ss.get("cp_open_version")
    try:
        plan = store.load_plan(name, None if version in (None, "latest") else int(version))
    except InputError as err:
        ss["cp_flash"] = ("error", str(err))
        return
    _load(plan, f"saved plan '{name}'" + (f" version {version}" if version not in (None, "latest") else ""))


names = store.names("plan")
if "cp_pending_load" in ss:
    # A plan imported further down the page: load it here, before the input widgets exist.
    _load(*ss.pop("cp_pending_load"))
    ss["cp_pick_pending"] = ss["cp_base"].name
if "cp_pick_pending" in ss:
    # After a save or an import, the picker shows the plan being edited and the note box empties.
    ss["cp_open_name"] = ss.pop("cp_pick_pending")
    ss["cp_open_version"] = "latest"
    ss["cp_note"] = ""
if "cp_base" not in ss:
    if names:
        _load(store.load_plan(names[0]), f"saved plan '{names[0]}'")
    else:
        st.info("The store holds no plans yet; import a plan file below.")
        st.stop()
elif ss.get("cp_editor_unit") != view.flow_unit:
    # The flow unit changed in the sidebar: show the current plan's flows in the new unit.
    current = ss.get("cp_current_plan", ss["cp_base"])
    ss["cp_editor_df"] = _editor_frame(current)
    ss["cp_editor_unit"] = view.flow_unit
    ss["cp_rev"] += 1

# Laptop first: the inputs on the left, the headline results beside them on the right, so
# they stay in view while the plan is edited (a 1366 x 768 screen shows both).
inputs_col, headline_col = st.columns([7, 3], gap="small")
headline = headline_col.container(border=True)
with inputs_col.container(border=True):
    c1, c2, c3 = st.columns([3, 1, 1], vertical_alignment="bottom")
    if names and ss.get("cp_open_name") not in names:  # the default: the plan being edited, else the first
        ss["cp_open_name"] = ss["cp_base"].name if ss["cp_base"].name in names else names[0]
    c1.selectbox("Open a saved plan", names, key="cp_open_name")
    history = store.history("plan", ss["cp_open_name"]) if ss.get("cp_open_name") in names else []
    c2.selectbox("Version", ["latest"] + [str(v.version) for v in history], key="cp_open_version")
    c3.button("Open", on_click=_open_selected, icon=":material/folder_open:", width="stretch")
    st.caption(f"Editing: {ui.md(ss['cp_origin'])}")
flash = ss.pop("cp_flash", None)
if flash:
    getattr(inputs_col, flash[0])(ui.md(flash[1]))


# ---- the inputs ----------------------------------------------------------------------

inputs_col.subheader("Inputs")
a1, a2, a3, a4 = inputs_col.columns([2.6, 1.7, 1, 1])  # "Sevoflurane" whole at 1366 px
a1.text_input("Plan name", key="cp_name", max_chars=120)
a2.selectbox("Agent", VOLATILES, key="cp_agent", format_func=lambda k: ref.agents[k].label)
a3.text_input("Patient weight", key="cp_weight", help="e.g. 78 kg or 172 lb")
a4.text_input("Patient age", key="cp_age", help="in years, e.g. 52 year")
slots = {"name": a1.empty(), "agent": a2.empty(), "weight": a3.empty(), "age": a4.empty()}

with inputs_col.expander("Safety limits and scavenging", icon=":material/tune:"):
    b1, b2, b3 = st.columns(3)
    b1.text_input("Warn under inspired O2", key="cp_floor", help="Never below 21 %")
    b2.text_input(
        "Lowest sevoflurane flow",
        key="cp_sevo_min",
        help="Some labelling asks for at least 1 L/min (2 L/min beyond 1 MAC-hour); follow local protocol",
    )
    b3.text_input("Agent captured before release", key="cp_capture", help="Share of scavenged agent captured, 0-100 %")
    slots.update(
        {"inspired_o2_floor": b1.empty(), "sevoflurane_min_flow": b2.empty(), "capture_efficiency": b3.empty()}
    )

inputs_col.markdown("**Phases** — one row per phase; add or delete rows at the table's edge.")
editor_key = f"cp_phases_{ss['cp_rev']}"
edited = inputs_col.data_editor(
    ui.state.editor_base(editor_key, ss["cp_editor_df"]),
    key=editor_key,
    num_rows="dynamic",
    hide_index=True,
    width="stretch",
    column_config={
        # Widths in px that add up to the table's width beside the figures on a 1366 px laptop,
        # so no heading is cut; the flows' headings are short, their help says what they hold.
        "phase": st.column_config.TextColumn("phase", required=True, max_chars=80, width=90),
        "duration": st.column_config.TextColumn("duration", help="e.g. 75 min or 1.25 h", required=True, width=80),
        "O2": st.column_config.TextColumn("O2", help="O2 flow, e.g. 0.5 L/min or 500 mL/min", width=70),
        "air": st.column_config.TextColumn("air", help="Medical air flow, e.g. 1 L/min", width=70),
        "N2O": st.column_config.TextColumn("N2O", help="N2O flow, e.g. 0 L/min", width=66),
        "control": st.column_config.SelectboxColumn(
            "control",
            options=list(CONTROL_LABELS),
            required=True,
            width=80,
            help="dial: vaporizer setting; target: end-tidal MAC multiple",
        ),
        "setting": st.column_config.TextColumn("dial % or target", help="e.g. 2.5 % (dial) or 1.0 (x MAC)", width=124),
    },
)


def _control_switches(before: pd.DataFrame | None, after: pd.DataFrame) -> list[int]:
    """Rows whose control changed in this run while their setting stayed as typed for the other one."""
    if before is None:
        return []
    rows = []
    for i in range(min(len(before), len(after))):
        was, now = before["control"].iloc[i], after["control"].iloc[i]
        setting = after["setting"].iloc[i]
        if (
            was != now
            and was in CONTROL_LABELS
            and setting == before["setting"].iloc[i]
            and setting is not None
            and setting == setting
            and str(setting).strip()
        ):
            rows.append(i)
    return rows


switched = _control_switches(ui.state.last_edited(editor_key), edited)
if switched:
    # A dial setting left in a target row would be read as a MAC multiple ("2 %" as 2 x MAC),
    # a target left in a dial row as a dial %: clear it, and say so.
    frame = edited.copy()
    notes = []
    for i in switched:
        old = str(frame.at[frame.index[i], "setting"]).strip()
        if frame["control"].iloc[i] == "target":
            notes.append(
                f"row {i + 1}: the control is now an end-tidal target, so the dial setting '{old}' "
                "was cleared; type the target as a MAC multiple (e.g. 1.0)"
            )
        else:
            notes.append(
                f"row {i + 1}: the control is now the vaporizer dial, so the target '{old}' was "
                "cleared; type the dial setting in % (e.g. 2 %)"
            )
        frame.at[frame.index[i], "setting"] = None
    ss["cp_editor_df"] = frame.reset_index(drop=True)
    ss["cp_rev"] += 1
    ss["cp_flash"] = ("warning", "Phases table, " + "; ".join(notes) + ".")
    st.rerun()
ui.state.remember_editor(editor_key, edited, family="cp_phases_")
table_slot = inputs_col.empty()


_BARE_NUMBER = re.compile(r"[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?")


def _raw_inputs() -> dict:
    base = plan_to_dict(ss["cp_base"])
    base["name"] = ss["cp_name"]
    base["agent"] = ss["cp_agent"]
    base["patient"]["weight"] = ss["cp_weight"]
    base["patient"]["age"] = ss["cp_age"]
    base["settings"]["inspired_o2_floor"] = ss["cp_floor"]
    base["settings"]["sevoflurane_min_flow"] = ss["cp_sevo_min"]
    base["settings"]["capture_efficiency"] = ss["cp_capture"]
    base["settings"]["gwp_source"] = view.gwp_source
    base["settings"]["room_temperature"] = f"{view.temperature_c:g} degC"
    if not ss.get("cp_own_prices"):
        base.pop("prices", None)  # the prices in use on every page, unless the plan's own are chosen
    phases = []
    for row in edited.to_dict("records"):
        if all(v is None or (isinstance(v, str) and not v.strip()) or v != v for v in row.values()):
            continue  # an empty added row
        p = {}
        for col, key in COLUMNS.items():
            v = row.get(col)
            if v is not None and v == v and str(v).strip():
                p[key] = str(v).strip()
                if key in ("o2", "air", "n2o") and _BARE_NUMBER.fullmatch(p[key]):
                    p[key] += " " + view.flow_unit  # a bare flow is in the unit the table shows
        setting = row.get("setting")
        if setting is not None and setting == setting and str(setting).strip():
            p["target" if row.get("control") == "target" else "dial"] = str(setting).strip()
        phases.append(p)
    base["phases"] = phases
    return base


@st.cache_data(show_spinner=False, max_entries=256)
def _build(raw: dict, ref_key: str, _ref) -> tuple[str, CasePlan | str, str]:
    """("ok", plan, "") or ("error", field, message) for the typed inputs.

    The one place the page reads its inputs into a plan; ``raw`` (in the plan-file form)
    is the cache key.

    Dials are checked against the vaporizer maxima of the values in use (``_ref``, keyed
    by ``ref_key``), so that error is shown by its cell too.
    """
    try:
        plan = plan_from_dict(raw, "", _ref)
    except InputError as err:
        return "error", err.field, str(err)
    return "ok", plan, ""


_PHASE_FIELD = re.compile(r"^phases\[(\d+)\]\.?(\w*)")
_FIELD_LABEL = {
    "name": "phase",
    "duration": "duration",
    "o2": "O2 flow",
    "air": "air flow",
    "n2o": "N2O flow",
    "dial": "dial % or target",
    "target": "dial % or target",
    "dial/target": "dial % or target",
    "o2/air/n2o": "flows",
}


def _place_error(field: str, message: str) -> None:
    m = _PHASE_FIELD.match(field)
    if m:
        row, col = int(m.group(1)), m.group(2)
        text = message.split(": ", 1)[-1] if ": " in message else message
        table_slot.error(
            ui.md(f"Phases table, row {row}, {_FIELD_LABEL.get(col, col or 'row')}: {text}"), icon=":material/error:"
        )
        return
    if field == "phases":
        table_slot.error("Phases table: a plan needs at least one phase.", icon=":material/error:")
        return
    key = field.split(".")[-1]
    slot = slots.get(key)
    (slot or table_slot).error(ui.md(field_words(message)), icon=":material/error:")


status, payload, message = _build(_raw_inputs(), ref_key, ref)
result = None
if isinstance(payload, CasePlan):
    try:
        with st.spinner("Computing the case..."):
            result = ui.common.compute_plan(payload, ref_key, ref)
        ss["cp_last_plan"] = payload
    except InputError as err:
        _place_error(err.field, str(err))
else:
    _place_error(payload, message)

if result is None:
    headline.warning(
        "These figures are the last valid result; correct the entry on the left to update them.",
        icon=":material/history:",
    )
    try:
        result = ui.common.compute_plan(ss["cp_last_plan"], ref_key, ref)
    except InputError as err:  # e.g. the GWP source has no value for this agent
        ui.show_input_error(err)
        st.stop()
plan = result.plan
ss["cp_current_plan"] = plan
t = result.totals


# ---- results -------------------------------------------------------------------------


@st.cache_data(show_spinner=False, max_entries=64)
def _baseline_totals(base_plan: CasePlan, ref_key: str, _ref) -> dict:
    return ui.common.compute_plan(base_plan, ref_key, _ref).totals


own_items = ui.provenance.price_items(ss["cp_base"].prices)
own = (f"the plan '{ss['cp_base'].name}'", ss["cp_base"].prices) if own_items and ss.get("cp_own_prices") else None
base_plan = replace(ui.apply_settings(ss["cp_base"], view), prices=ss["cp_base"].prices if own else {})
try:
    b = _baseline_totals(base_plan, ref_key, ref)
except InputError:
    b = None


def _delta(key, fmt, scale=1.0):
    if b is None or abs(t[key] - b[key]) < 1e-9:
        return None
    return fmt((t[key] - b[key]) * scale)


headline.markdown("##### What this case uses")
if own_items:
    headline.checkbox(
        "Use the plan's own prices",
        key="cp_own_prices",
        help="Off: the prices in use on every page (your Reference values over the built-in examples). "
        f"On: the prices written in the plan for {', '.join(own_items)}.",
    )
with headline:
    unsafe = ui.cautions.unsafe_banner(result.warnings, "this plan")
ui.provenance.show(view, ref, own)
agent = ref.volatile(plan.agent)
co2e_scale = ui.common.CO2E_UNITS[view.co2e_unit]
m = [headline] * 6  # one figure a row: labels stay whole in a narrow column
m[0].metric(
    "Liquid agent",
    f"{t['liquid_agent_ml']:.1f} mL",
    _delta("liquid_agent_ml", lambda d: f"{d:+.1f} mL"),
    delta_color="inverse",
    help="Change shown against the plan as opened",
)
m[1].metric(
    "Bottles",
    f"{t['bottles']:.2f}",
    _delta("bottles", lambda d: f"{d:+.2f}"),
    delta_color="inverse",
    help=f"{agent.label} bottle of {agent.bottle_volume:g} mL",
)
m[2].metric(
    f"Emissions ({view.co2e_unit})",
    view.co2e_number(t["co2e_total_kg"]),
    _delta("co2e_total_kg", lambda d: f"{d:+,.3g}", co2e_scale),
    delta_color="inverse",
    help=f"{result.gwp_label}; agent and N2O released",
)
m[3].metric(
    f"Cost ({result.currency})",
    f"{t['cost_total']:,.2f}",
    _delta("cost_total", lambda d: f"{d:+,.2f}"),
    delta_color="inverse",
    help="Agent pro rata by volume, gases, absorbent",
)
m[4].metric(
    "End-tidal MAC-h",
    f"{t['end_tidal_mac_hours']:.2f}",
    _delta("end_tidal_mac_hours", lambda d: f"{d:+.2f}"),
    delta_color="off",
    help="End-tidal MAC multiple over time (the depth the patient reaches; what a lower flow "
    "changes). The dial-based figure counts the vaporizer setting instead.",
)
m[4].caption(f"Dial-based: {t['mac_hours']:.2f} MAC-h")
tc = result.timecourse
if "min_inspired_o2_pct" in t:
    safe = t.get("lowest_safe_fd_o2_pct")
    m[5].metric(
        "Lowest inspired O2",
        f"{t['min_inspired_o2_pct']:.0f} %",
        _delta("min_inspired_o2_pct", lambda d: f"{d:+.0f} %"),
        help="Predicted by the circle model"
        + (
            f"; lowest fresh gas O2 that keeps it above the floor: {safe:.0f} %"
            if safe == safe and safe is not None
            else ""
        ),
    )
else:
    m[5].metric(
        "Lowest fresh gas O2",
        f"{t['min_fd_o2_pct']:.0f} %",
        help="O2 share of the fresh gas; inspired O2 in a circle is lower at low flow",
    )
g = st.columns(6)
g[0].metric("Oxygen", f"{t['oxygen_l']:,.0f} L")
g[1].metric("Medical air", f"{t['air_l']:,.0f} L")
g[2].metric("Nitrous oxide", f"{t['nitrous_oxide_l']:,.0f} L")
g[3].metric("CO2 absorbent", f"{t['absorbent_g']:,.0f} g")
g[4].metric("Agent emitted", f"{t['agent_emitted_g']:.1f} g")
g[5].metric("Duration", f"{t['duration_min']:.0f} min")

if result.warnings:
    headline.warning(
        f'{len(result.warnings)} warning(s): see "Check before use" below the inputs.', icon=":material/warning:"
    )
    with st.container(border=True):
        st.markdown("**Check before use**")
        ui.cautions.show_other_warnings(result.warnings)
else:
    st.success("No warnings for this plan at the chosen limits.", icon=":material/check_circle:")


# ---- charts --------------------------------------------------------------------------

fate = result.agent_fate()


@st.cache_resource(show_spinner=False, max_entries=64)
def _figure(kind: str, plan: CasePlan, ref_key: str, _result, _fate, _label):
    """One of the page's figures for one result.

    Built when first shown (its tab opened, or a report asked for), then kept while the
    inputs stay the same.
    """
    if kind == "time":
        return charts.timecourse_figure(_result.timecourse, _result.plan.settings.inspired_o2_floor * 100)
    if kind == "fate":
        return charts.fate_figure(_fate, _label)
    return charts.cost_figure(_result.totals, _result.currency)


@st.cache_resource(show_spinner=False, max_entries=64)
def _sweep_figure(plan: CasePlan, ref_key: str, co2e_unit: str, _sw, _currency):
    return charts.sweep_figure(
        _sw.table,
        "fgf_l_min",
        "cost_total",
        "co2e_total_kg",
        _sw.cost_lowest_flow_l_min,
        _sw.emission_lowest_flow_l_min,
        _currency,
        ui.common.CO2E_UNITS[co2e_unit],
        co2e_unit,
        feasible=_sw.table.get("feasible"),
        unsafe=~_sw.table["o2_safe"],
    )


@st.cache_data(show_spinner=False, max_entries=128)
def _sweep_cached(plan: CasePlan, ref_key: str, _ref):
    """The flow sweep of the plan (the plan and ``ref_key`` are the key)."""
    from model.sweep import flow_sweep

    return flow_sweep(plan, _ref)


def _sweep():
    """The flow sweep (None when it cannot be worked out: see ``_sweep_error``)."""
    try:
        return _sweep_cached(result.plan, ref_key, ref)
    except InputError:
        return None


class _Figures(dict):
    """The page's figures by name, each built on first use.

    A rerun builds only the figure of the open tab; a report builds the rest when it is
    downloaded.
    """

    def __missing__(self, kind):
        if kind == "sweep":
            sw = _sweep()
            fig = None if sw is None else _sweep_figure(result.plan, ref_key, view.co2e_unit, sw, result.currency)
        else:
            fig = _figure(kind, result.plan, ref_key, result, fate, agent.label)
        self[kind] = fig
        return fig


figs = _Figures()
ph = result.phases
shown = pd.DataFrame(
    {
        "phase": ph["phase"],
        "minutes": ph["duration_min"],
        f"fresh gas ({view.flow_unit})": ph["fgf_l_min"] * (1000 if view.flow_unit == "mL/min" else 1),
        "flow band": ph["flow_band"],
        "fresh gas O2 %": ph["fd_o2_pct"].round(0),
        "dial %": ph["dial_pct"],
        "liquid (mL)": ph["liquid_agent_ml"].round(1),
        f"CO2e ({view.co2e_unit})": (ph["co2e_kg"] * co2e_scale).round(3),
        f"cost ({result.currency})": ph["cost_total"].round(2),
        "MAC-hours, dial-based": ph["mac_hours"].round(2),
        "MAC-hours, end-tidal": ph["end_tidal_mac_hours"].round(2),
        "mix altered": ph["flows_altered"],
    }
)

# Only the open tab runs (on_change="rerun"): the flow sweep, its figure and the other
# figures are worked out when their tab is opened, which keeps a rerun after an edit quick.
# The phases table opens first: it answers "what does each phase use" while editing, and a
# page without a chart on it loads seconds sooner (the browser loads plotly only for a chart).
TABS = ("Phases", "Time course", "Where the agent went", "Flow sweep", "Cost by item")
tab = dict(zip(TABS, st.tabs(TABS, key="cp_tab", on_change="rerun"), strict=True))
with tab["Time course"]:
    if tab["Time course"].open:
        if figs["time"] is not None:
            st.plotly_chart(figs["time"], width="stretch", key="cp_fig_time")
        else:
            st.info(
                "The minute-by-minute time course (dial, inspired and end-tidal agent, inspired O2, "
                "cumulative liquid) appears here when the patient and circle model runs for this plan.",
                icon=":material/schedule:",
            )
with tab["Where the agent went"]:
    if tab["Where the agent went"].open:
        c1, c2 = st.columns([3, 2])
        c1.plotly_chart(figs["fate"], width="stretch", key="cp_fig_fate")
        with c2:
            fmt.table(fate, width="content")
        if "agent_vented_g" not in t and t.get("agent_uptake_g", 0.0) == 0.0:
            c2.caption("No uptake model ran for this plan: all delivered agent counts as vented (an upper bound).")
        if plan.settings.capture_efficiency > 0:
            c2.caption(f"{plan.settings.capture_efficiency:.0%} of the vented agent is captured before release.")
with tab["Flow sweep"]:
    if tab["Flow sweep"].open:
        try:
            with st.spinner("Sweeping the maintenance flow..."):
                sw = _sweep_cached(result.plan, ref_key, ref)
        except InputError as err:
            ui.show_input_error(err, "Flow sweep")
        else:
            st.plotly_chart(figs["sweep"], width="stretch", key="cp_fig_sweep")
            phase_name = plan.phases[sw.phase_index].name
            best = [
                f"lowest cost at **{view.flow(sw.cost_lowest_flow_l_min)}**" if sw.cost_lowest_flow_l_min else None,
                f"lowest CO2e at **{view.flow(sw.emission_lowest_flow_l_min)}**"
                if sw.emission_lowest_flow_l_min
                else None,
            ]
            st.markdown(
                f"Flow of the *{ui.md(phase_name)}* phase varied at the same end-tidal depth "
                f"({sw.target_mac:.2f} x MAC): "
                + (", ".join(b for b in best if b) or "no flow keeps inspired O2 above the floor")
                + "."
            )
            st.caption(
                f"Only flows that keep predicted inspired O2 above {sw.inspired_o2_floor_pct:.0f} % and "
                "hold the depth count as candidates (hollow markers do not; crosses are unsafe: hypoxic "
                "mixture or O2 running out). A lower flow also needs closer monitoring and follows local "
                "protocol."
            )
            n_unsafe = int((~sw.table["o2_safe"]).sum())
            if n_unsafe:
                st.markdown(
                    f":red[**{ui.cautions.UNSAFE}** at {n_unsafe} of the {len(sw.table)} flows swept] "
                    "(crosses; 'safety' column of the sweep table): their cost and CO2e are not savings "
                    "to aim for."
                )
            with st.expander("Sweep table"):
                fmt.table(sw.table, result.currency)
with tab["Phases"]:
    if tab["Phases"].open is not False:
        fmt.table(shown)
with tab["Cost by item"]:
    if tab["Cost by item"].open:
        c1, c2 = st.columns([3, 2])
        c1.plotly_chart(figs["cost"], width="stretch", key="cp_fig_cost")
        with c2:
            fmt.table(result.cost_by_item(), width="content")


# ---- downloads, saving, plan files ---------------------------------------------------

LABELS = [
    ("Liquid agent", "liquid_agent_ml", "mL"),
    ("Bottles", "bottles", "bottles"),
    ("Agent delivered", "agent_mass_g", "g"),
    ("Agent emitted", "agent_emitted_g", "g"),
    ("Oxygen", "oxygen_l", "L"),
    ("Medical air", "air_l", "L"),
    ("Nitrous oxide", "nitrous_oxide_l", "L"),
    ("CO2 absorbent", "absorbent_g", "g"),
    ("CO2e, agent", "co2e_agent_kg", "kg CO2e"),
    ("CO2e, nitrous oxide", "co2e_nitrous_oxide_kg", "kg CO2e"),
    ("CO2e, total", "co2e_total_kg", "kg CO2e"),
    ("Cost, total", "cost_total", result.currency),
    ("MAC-hours, end-tidal", "end_tidal_mac_hours", "MAC-h"),
    ("MAC-hours, dial-based", "mac_hours", "MAC-h"),
    ("Duration", "duration_min", "min"),
    ("Lowest fresh gas O2", "min_fd_o2_pct", "%"),
    ("Lowest predicted inspired O2", "min_inspired_o2_pct", "%"),
]
summary = pd.DataFrame(
    {
        "plan": plan.name,
        "safety": ui.cautions.safety_text(result.warnings),
        "figure": [x[0] for x in LABELS],
        "value": [float(t[x[1]]) for x in LABELS],
        "unit": [x[2] for x in LABELS],
    }
)
inputs = {
    "plan": plan.name,
    "safety": ui.cautions.safety_text(result.warnings),
    "agent": agent.label,
    "patient weight": f"{plan.patient.weight_kg:g} kg",
    "patient age": f"{plan.patient.age_years:g} years",
    "GWP source": result.gwp_label,
    "room temperature": f"{plan.settings.temperature_c:g} °C",
    "currency": result.currency,
    "inspired O2 floor": f"{plan.settings.inspired_o2_floor:.0%}",
    "overrides": ", ".join(ref.override_origins) or "none",
    **ui.provenance.in_use(view, ref, own),
}
inputs.update(
    {
        f"phase {i}: {p.name}": f"{p.minutes:g} min; O2 {p.oxygen_l_min:g}, air {p.air_l_min:g}, "
        f"N2O {p.nitrous_oxide_l_min:g} L/min; "
        + (f"dial {p.dial_pct:g} %" if p.dial_pct is not None else f"target {p.target_mac:g} x MAC")
        for i, p in enumerate(plan.phases, start=1)
    }
)
sources = ui.common.sources_table(ref_key, ref)
tables = {
    "Summary": summary,
    "Phases": result.phases.assign(plan=plan.name),
    "Cost by item": result.cost_by_item(),
    "Where the agent went": fate,
    "Inputs": pd.DataFrame({"input": list(inputs), "value": list(inputs.values())}),
    "Warnings": ui.cautions.warnings_table(result.warnings),
    "Sources": sources,
}
if tc is not None:
    tables["Time course"] = tc
# Built when the workbook is downloaded (the sweep runs then if its tab was never opened).
tables["Flow sweep"] = lambda: (lambda sw: None if sw is None else sw.table)(_sweep())
edited = " (edited on this page)" if ui.apply_settings(ss["cp_base"], view) != plan else ""
prov = ui.provenance.block(
    view,
    ref,
    f"Case plan: {plan.name}",
    warnings=result.warnings,
    lowest_inspired_o2_pct=float(t["min_inspired_o2_pct"]),
    files=[input_file("plan", ss["cp_origin"] + edited, plan_to_toml(plan), len(plan.phases), "phases")],
    own=own,
    settings={
        "inspired O2 floor": f"{plan.settings.inspired_o2_floor:.0%}",
        "overrides": ", ".join(ref.override_origins) or "none",
    },
)


def _report(prov) -> str:
    return html_export(
        ("UNSAFE PRACTICE. " if unsafe else "") + f"Case plan: {plan.name}",
        inputs=inputs,
        tables={"Summary": summary[["figure", "value", "unit"]], "Phases": shown},
        figures=[
            ("Time course", figs["time"]),
            ("Where the agent went", figs["fate"]),
            ("Flow sweep", figs["sweep"]),
            ("Cost by item", figs["cost"]),
        ],
        warnings=ui.cautions.caution_lines(result.warnings),
        cautions=[ui.CAUTION],
        sources=sources,
        currency=result.currency,
        provenance=prov,
    )


st.divider()
d1, d2 = st.columns([3, 2])
with d1:
    st.markdown("**Download these results**")
    ui.downloads(plan.name, tables, _report, key="cp_dl", provenance=prov)
with d2:
    st.markdown("**Save this plan**")
    s1, s2 = st.columns([3, 1], vertical_alignment="bottom")
    note = s1.text_input("Note for this version", key="cp_note", placeholder="optional, e.g. after theatre meeting")
    may_save = ui.save_permission()
    if (
        s2.button(
            "Save",
            type="primary",
            icon=":material/save:",
            width="stretch",
            disabled=status != "ok" or not may_save.allowed,
        )
        and may_save.allowed
    ):
        # The plan's own prices are kept with it whether or not they were used here.
        version = store.save_plan(replace(plan, prices=dict(ss["cp_base"].prices)), note, author=ui.author())
        ss["cp_base"] = plan
        ss["cp_origin"] = f"saved plan '{plan.name}' version {version}"
        ss["cp_saved_msg"] = f"Saved '{plan.name}' as version {version}. Earlier versions are kept."
        ss["cp_pick_pending"] = plan.name
        st.rerun()
    if not may_save.allowed:
        st.caption(ui.md(may_save.reason))
    saved_msg = ss.pop("cp_saved_msg", None)
    if saved_msg:
        st.success(ui.md(saved_msg), icon=":material/check_circle:")

with st.expander("Plan files and saved versions", icon=":material/description:"):
    f1, f2 = st.columns(2)
    with f1:
        st.markdown("**Import a plan file** (TOML, its format below)")
        up = st.file_uploader(
            "Plan file", type=["toml"], key="cp_upload", label_visibility="collapsed", disabled=not may_save.allowed
        )
        if up is not None and may_save.allowed and ss.get("cp_upload_done") != up.file_id:
            ss["cp_upload_done"] = up.file_id
            try:
                from model.io.uploads import check_upload

                text = check_upload(up.name, up.getvalue(), "plan").text
                imported, version = store.import_plan_text(text, up.name, author=ui.author())
            except InputError as err:
                st.error(ui.md(f"Not imported, the store is unchanged. {err}"), icon=":material/error:")
            else:
                ss["cp_pending_load"] = (imported, f"imported file {up.name}")
                ss["cp_flash"] = ("success", f"Imported '{imported.name}' as version {version}.")
                st.rerun()
        fmt.format_help("Plan files", inline=True)
    with f2:
        st.markdown("**Export this plan**")
        st.download_button(
            "Plan file (TOML)",
            data=plan_to_toml(plan),
            file_name=f"{ui.common._slug(plan.name)}.toml",
            mime="application/toml",
            key="cp_dl_toml",
            on_click="ignore",
            icon=":material/download:",
        )
    hist = store.history("plan", plan.name)
    if hist:
        st.markdown(f"**Saved versions of '{ui.md(plan.name)}'**")
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
