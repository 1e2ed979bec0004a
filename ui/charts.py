"""Plotly figures for the dashboard pages and the HTML reports (presentation only).

User text (plan and phase names) passes through :func:`model.exports.chart_text` before it
reaches a label, because plotly reads a few HTML tags in labels.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import plotly.graph_objects as go
from plotly.subplots import make_subplots

from model.exports import chart_text

#: A calm palette of our own (colour-blind friendly order).
PALETTE = ["#2f6f8f", "#e08a2e", "#5a9e6f", "#b5523b", "#7d6aa8", "#8a8a8a", "#c9a227"]
FONT = dict(family="system-ui, -apple-system, Segoe UI, sans-serif", size=13, color="#1d2a33")


def _style(fig: go.Figure, title: str = "", height: int = 360) -> go.Figure:
    fig.update_layout(title=dict(text=title, x=0.0, xanchor="left", font=dict(size=15)) if title else None,
                      template="plotly_white", font=FONT, height=height, colorway=PALETTE,
                      margin=dict(l=10, r=10, t=50 if title else 20, b=10),
                      legend=dict(orientation="h", yanchor="bottom", y=1.02, x=0))
    return fig


def cost_by_item(totals: dict, currency: str) -> pd.DataFrame:
    items = [("Liquid agent", "cost_agent"), ("Oxygen", "cost_oxygen"), ("Medical air", "cost_air"),
             ("Nitrous oxide", "cost_nitrous_oxide"), ("CO2 absorbent", "cost_absorbent")]
    return pd.DataFrame({"item": [i for i, _ in items],
                         f"cost ({currency})": [float(totals.get(k, 0.0)) for _, k in items]})


def cost_figure(totals: dict, currency: str) -> go.Figure:
    df = cost_by_item(totals, currency)
    col = df.columns[1]
    fig = go.Figure(go.Bar(x=df[col], y=df["item"], orientation="h", marker_color=PALETTE[0],
                           text=[f"{v:,.2f}" for v in df[col]], textposition="auto",
                           hovertemplate="%{y}: %{x:,.2f} " + chart_text(currency) + "<extra></extra>"))
    fig.update_yaxes(autorange="reversed")
    fig.update_xaxes(title_text=chart_text(currency))
    return _style(fig, "Cost by item", 300)


def agent_fate(totals: dict, metabolised_fraction: float) -> pd.DataFrame:
    """Where the delivered agent went, in grams (from the case totals).

    Vented = delivered less the patient's uptake; metabolised = uptake x the agent's
    metabolised share (unless the model reports it); taken up = the rest of the uptake.
    """
    delivered = float(totals.get("agent_mass_g", 0.0))
    uptake = float(totals.get("agent_uptake_g", 0.0))
    metabolised = float(totals.get("agent_metabolised_g", uptake * metabolised_fraction))
    return pd.DataFrame({
        "where": ["Vented through the scavenger", "Taken up by the patient", "Metabolised"],
        "agent_g": [max(delivered - uptake, 0.0), max(uptake - metabolised, 0.0), metabolised],
    })


def fate_figure(fate: pd.DataFrame, agent_label: str) -> go.Figure:
    fig = go.Figure(go.Pie(labels=fate["where"], values=fate["agent_g"], hole=0.55, sort=False,
                           marker=dict(colors=[PALETTE[1], PALETTE[0], PALETTE[2]]),
                           texttemplate="%{percent:.1%}", hovertemplate="%{label}: %{value:.1f} g<extra></extra>"))
    total = float(fate["agent_g"].sum())
    fig.add_annotation(text=f"{total:.1f} g<br>{chart_text(agent_label.lower())}", showarrow=False,
                       font=dict(size=14))
    return _style(fig, "Where the agent went", 320)


_TC_GROUPS = [
    ("Agent (%)", ("dial", "inspired_agent", "fi_agent", "end_tidal", "et_agent", "alveolar")),
    ("Inspired O2 (%)", ("inspired_o2", "fio2", "fi_o2")),
    ("Liquid used (mL)", ("liquid", "cumulative")),
]


def timecourse_figure(tc: pd.DataFrame | None) -> go.Figure | None:
    """The case's time course: agent concentrations, inspired O2 and cumulative liquid.

    Columns are matched by name (``dial``, ``inspired``/``end_tidal`` agent, ``fio2``,
    cumulative ``liquid``); the x axis is the ``minute``/``time`` column or the index.
    """
    if tc is None or len(tc) == 0:
        return None
    tc = tc.reset_index(drop=False) if "minute" not in tc.columns and "time_min" not in tc.columns else tc
    xcol = next((c for c in tc.columns if c in ("minute", "time_min", "t_min", "minutes")), tc.columns[0])
    groups = []
    used = {xcol}
    for label, keys in _TC_GROUPS:
        cols = [c for c in tc.columns if c not in used and pd.api.types.is_numeric_dtype(tc[c])
                and any(k in str(c).lower() for k in keys)]
        used.update(cols)
        if cols:
            groups.append((label, cols))
    if not groups:
        return None
    fig = make_subplots(rows=len(groups), cols=1, shared_xaxes=True, vertical_spacing=0.07,
                        subplot_titles=[g[0] for g in groups])
    for row, (label, cols) in enumerate(groups, start=1):
        for i, c in enumerate(cols):
            fig.add_trace(go.Scatter(x=tc[xcol], y=tc[c], mode="lines", name=str(c).replace("_", " "),
                                     line=dict(width=2, color=PALETTE[(row * 3 + i) % len(PALETTE)],
                                               shape="hv" if "dial" in str(c) else "linear")),
                          row=row, col=1)
    fig.update_xaxes(title_text="minutes", row=len(groups), col=1)
    return _style(fig, "Time course", 220 * len(groups) + 60)


def sweep_figure(sweep: pd.DataFrame, flow_col: str, cost_col: str, co2e_col: str,
                 best_cost: float | None, best_co2e: float | None, currency: str,
                 co2e_scale: float = 1.0, co2e_unit: str = "kg CO2e") -> go.Figure:
    """Cost and CO2e against maintenance fresh gas flow, with the lowest of each marked."""
    fig = make_subplots(specs=[[{"secondary_y": True}]])
    fig.add_trace(go.Scatter(x=sweep[flow_col], y=sweep[cost_col], name=f"cost ({chart_text(currency)})",
                             mode="lines", line=dict(color=PALETTE[0], width=2.5)), secondary_y=False)
    fig.add_trace(go.Scatter(x=sweep[flow_col], y=sweep[co2e_col] * co2e_scale, name=co2e_unit,
                             mode="lines", line=dict(color=PALETTE[3], width=2.5, dash="dot")),
                  secondary_y=True)
    for flow, label, color in ((best_cost, "lowest cost", PALETTE[0]), (best_co2e, "lowest CO2e", PALETTE[3])):
        if flow is not None and np.isfinite(flow):
            fig.add_vline(x=flow, line=dict(color=color, dash="dash", width=1.5),
                          annotation_text=f"{label}: {flow:.2g} L/min", annotation_position="top")
    fig.update_xaxes(title_text="maintenance fresh gas flow (L/min)")
    fig.update_yaxes(title_text=f"cost ({chart_text(currency)})", secondary_y=False)
    fig.update_yaxes(title_text=co2e_unit, secondary_y=True)
    return _style(fig, "Flow sweep", 380)


def grouped_bars(df: pd.DataFrame, category: str, value_cols: list[str], title: str,
                 yaxis: str = "") -> go.Figure:
    """Bars of several series side by side per category (one series per value column)."""
    fig = go.Figure()
    for i, col in enumerate(value_cols):
        fig.add_trace(go.Bar(name=chart_text(col), x=df[category], y=df[col],
                             marker_color=PALETTE[i % len(PALETTE)]))
    fig.update_layout(barmode="group")
    if yaxis:
        fig.update_yaxes(title_text=yaxis)
    return _style(fig, title, 360)
