"""Plotly figures for the dashboard pages and their HTML reports (presentation only).

They use the house template of :mod:`model.present.theme`; the figures they draw (cost by
item, where the agent went) are worked out in :mod:`model.case`.

User text (plan and phase names) passes through :func:`model.present.exports.chart_text` before it
reaches a label, because plotly reads a few HTML tags in labels.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import plotly.graph_objects as go
from plotly.subplots import make_subplots

from model.case import cost_by_item
from model.present.exports import chart_text
from model.present.palette import CO2E_COLOUR, COST_COLOUR, DANGER, FLOW_BAND_COLOURS, PALETTE, agent_colour

# The house template and layout helpers live in model.present.theme (shared with the report
# figures and the command line's HTML report); the short names stay for the page figures.
from model.present.theme import house_layout as _style_layout
from model.present.theme import house_style as _style
from model.present.theme import new_figure as _fig


def cost_figure(totals: dict, currency: str) -> go.Figure:
    """Bars of a case's cost by item (:func:`model.case.cost_by_item`)."""
    df = cost_by_item(totals, currency)
    col = df.columns[1]
    fig = _fig(
        go.Bar(
            x=df[col],
            y=df["item"],
            orientation="h",
            marker_color=COST_COLOUR,
            text=[f"{v:,.2f}" for v in df[col]],
            textposition="auto",
            hovertemplate="%{y}: %{x:,.2f} " + chart_text(currency) + "<extra></extra>",
        )
    )
    fig.update_yaxes(autorange="reversed")
    fig.update_xaxes(title_text=chart_text(currency))
    return _style(fig, "Cost by item", 300)


def fate_figure(fate: pd.DataFrame, agent_label: str) -> go.Figure:
    """Ring of where a case's delivered agent went (:func:`model.case.agent_fate`)."""
    fig = _fig(
        go.Pie(
            labels=fate["where"],
            values=fate["agent_g"],
            hole=0.55,
            sort=False,
            marker=dict(colors=[PALETTE[1], PALETTE[0], PALETTE[2], PALETTE[5]]),
            texttemplate="%{percent:.1%}",
            hovertemplate="%{label}: %{value:.1f} g<extra></extra>",
        )
    )
    total = float(fate["agent_g"].sum())
    fig.add_annotation(text=f"{total:.1f} g<br>{chart_text(agent_label.lower())}", showarrow=False, font=dict(size=14))
    return _style(fig, "Where the agent went", 320, legend_right=True)


#: Time-course panels: (title, [(column, label)]) in the circle model's column names.
_TC_PANELS = [
    (
        "Agent (%)",
        [("dial_pct", "vaporizer dial"), ("inspired_agent_pct", "inspired"), ("end_tidal_agent_pct", "end-tidal")],
    ),
    ("Inspired O2 (%)", [("inspired_o2_pct", "inspired O2"), ("end_tidal_o2_pct", "end-tidal O2")]),
    ("Liquid agent used (mL)", [("liquid_agent_cumulative_ml", "cumulative liquid")]),
]


def timecourse_figure(tc: pd.DataFrame | None, o2_floor_pct: float | None = None) -> go.Figure | None:
    """The case's time course: dial, inspired and end-tidal agent, inspired O2, cumulative liquid.

    Reads the columns of ``CaseResult.timecourse`` (``time_min``, ``dial_pct``, ...); panels
    whose columns are missing are left out. The panels share the time axis. The figure is
    built in one go (data and layout as plain dicts, validated once): plotly's subplot and
    line helpers cost more than the rest of a Case plan rerun.
    """
    if tc is None or len(tc) == 0 or "time_min" not in tc.columns:
        return None
    panels = [(title, [(c, label) for c, label in cols if c in tc.columns]) for title, cols in _TC_PANELS]
    panels = [p for p in panels if p[1]]
    if not panels:
        return None
    n, gap = len(panels), 0.08
    h = (1 - gap * (n - 1)) / n
    layout = _style_layout("Time course", 200 * n + 40, legend_right=True)
    data, annotations, shapes = [], [], []
    colours = iter(PALETTE * 3)
    x = tc["time_min"].to_numpy()
    for row, (title, cols) in enumerate(panels, start=1):
        ax = "" if row == 1 else str(row)
        top = 1 - (row - 1) * (h + gap)
        layout[f"yaxis{ax}"] = dict(domain=[top - h, top], anchor=f"x{ax}")
        layout[f"xaxis{ax}"] = dict(
            domain=[0, 1], anchor=f"y{ax}", showticklabels=row == n, **({"matches": "x"} if row > 1 else {})
        )
        annotations.append(
            dict(
                text=title,
                x=0.5,
                xref="paper",
                xanchor="center",
                y=top,
                yref="paper",
                yanchor="bottom",
                showarrow=False,
                font=dict(size=14),
            )
        )
        for c, label in cols:
            data.append(
                dict(
                    type="scatter",
                    x=x,
                    y=tc[c].to_numpy(),
                    mode="lines",
                    name=label,
                    xaxis=f"x{ax}",
                    yaxis=f"y{ax}",
                    line=dict(
                        width=2,
                        color=next(colours),
                        shape="hv" if c == "dial_pct" else "linear",
                        dash="dot" if c == "dial_pct" else None,
                    ),
                )
            )
        if o2_floor_pct is not None and any(c == "inspired_o2_pct" for c, _ in cols):
            shapes.append(
                dict(
                    type="line",
                    xref=f"x{ax} domain",
                    x0=0,
                    x1=1,
                    yref=f"y{ax}",
                    y0=o2_floor_pct,
                    y1=o2_floor_pct,
                    line=dict(color=DANGER, dash="dash", width=1),
                )
            )
            annotations.append(
                dict(
                    text=f"floor {o2_floor_pct:.0f} %",
                    xref=f"x{ax} domain",
                    x=1,
                    xanchor="right",
                    yref=f"y{ax}",
                    y=o2_floor_pct,
                    yanchor="top",
                    showarrow=False,
                )
            )
    layout[f"xaxis{'' if n == 1 else n}"]["title"] = dict(text="minutes from start")
    layout.update(annotations=annotations, shapes=shapes)
    return go.Figure(data=data, layout=layout)


def sweep_figure(
    sweep: pd.DataFrame,
    flow_col: str,
    cost_col: str,
    co2e_col: str,
    best_cost: float | None,
    best_co2e: float | None,
    currency: str,
    co2e_scale: float = 1.0,
    co2e_unit: str = "kg CO2e",
    feasible=None,
    unsafe=None,
) -> go.Figure:
    """Cost and CO2e against the varied phase's fresh gas flow, side by side, lowest of each marked.

    Points that are not candidates (``feasible`` False: inspired O2 under the floor or the
    depth not held) are drawn as hollow markers; unsafe points (``unsafe`` True: hypoxic
    mixture or O2 running out) as crosses.
    """
    ok = np.ones(len(sweep), bool) if feasible is None else np.asarray(feasible, bool)
    bad = np.zeros(len(sweep), bool) if unsafe is None else np.asarray(unsafe, bool)
    symbols = np.where(bad, "x", np.where(ok, "circle", "circle-open"))
    cur = chart_text(currency)
    fig = make_subplots(
        rows=1,
        cols=2,
        horizontal_spacing=0.1,
        figure=_fig(),
        subplot_titles=[f"Cost of the case ({cur})", f"Emissions of the case ({co2e_unit})"],
    )
    panels = (
        (1, sweep[cost_col], COST_COLOUR, best_cost, "lowest cost", "%{y:,.2f} " + cur),
        (2, sweep[co2e_col] * co2e_scale, CO2E_COLOUR, best_co2e, "lowest CO2e", "%{y:,.2f} " + co2e_unit),
    )
    for col, y, colour, best, label, fmt in panels:
        fig.add_trace(
            go.Scatter(
                x=sweep[flow_col],
                y=y,
                mode="lines+markers",
                name=label.split()[1],
                marker=dict(symbol=symbols, size=9, color=colour, line=dict(width=2, color=colour)),
                line=dict(color=colour, width=2.5),
                showlegend=False,
                hovertemplate="%{x:g} L/min: " + fmt + "<extra></extra>",
            ),
            row=1,
            col=col,
        )
        if best is not None and np.isfinite(best):
            fig.add_vline(
                x=best,
                line=dict(color=colour, dash="dash", width=1.5),
                row=1,
                col=col,
                annotation_text=f"{label}: {best:.2g} L/min",
                annotation_position="top right",
                annotation_font_color=colour,
            )
        fig.update_xaxes(title_text="fresh gas flow (L/min)", row=1, col=col)
    return _style(fig, "", 360)


def grouped_bars(df: pd.DataFrame, category: str, value_cols: list[str], title: str, yaxis: str = "") -> go.Figure:
    """Bars of several series side by side per category (one series per value column)."""
    fig = _fig()
    for i, col in enumerate(value_cols):
        fig.add_trace(go.Bar(name=chart_text(col), x=df[category], y=df[col], marker_color=PALETTE[i % len(PALETTE)]))
    fig.update_layout(barmode="group")
    if yaxis:
        fig.update_yaxes(title_text=yaxis)
    return _style(fig, title, 360)


# ---- record audit ----------------------------------------------------------------------


def agent_spread_figure(cases: pd.DataFrame) -> go.Figure | None:
    """Liquid agent per case, one box per agent in the agent's house colour."""
    volatile = cases[cases["agent"] != "none"]
    if not len(volatile):
        return None
    fig = _fig()
    for agent in sorted(volatile["agent"].unique()):
        y = volatile.loc[volatile["agent"] == agent, "liquid_agent_ml"]
        fig.add_trace(
            go.Box(
                y=y,
                name=chart_text(str(agent).capitalize()),
                marker_color=agent_colour(agent),
                boxpoints="outliers",
                showlegend=False,
                hovertemplate="%{y:,.1f} mL<extra>" + chart_text(agent) + "</extra>",
            )
        )
    fig.update_yaxes(title_text="liquid agent per case (mL)", tickformat=",")
    return _style(fig, "Liquid agent per case: spread by agent", 360)


def flow_bands_figure(bands: pd.DataFrame) -> go.Figure:
    """Share of counted minutes in each flow band by theatre, stacked lowest flow first.

    The bands take the one ordered flow-band scale (``model.present.palette.FLOW_BAND_COLOURS``).
    """
    fig = _fig()
    for band, colour in FLOW_BAND_COLOURS.items():
        d = bands[bands["band"] == band]
        fig.add_trace(
            go.Bar(
                x=d["theatre"].map(chart_text),
                y=d["share"],
                name=band,
                marker_color=colour,
                marker_line=dict(color="white", width=0.5),
                hovertemplate="%{x}: %{y:.0%} " + band + "<extra></extra>",
            )
        )
    fig.update_layout(barmode="stack", legend_title_text="flow band (Baker 1994)", legend_traceorder="normal")
    fig.update_yaxes(title_text="share of counted minutes", tickformat=".0%")
    fig.update_xaxes(title_text="theatre", type="category")
    return _style(fig, "Time in each fresh gas flow band, by theatre", 380, legend_right=True)


def monthly_co2e_figure(by_month: pd.DataFrame, scale: float = 1.0, unit: str = "kg CO2e") -> go.Figure:
    """CO2e of the recorded cases by month."""
    fig = _fig(
        go.Scatter(
            x=by_month["month"],
            y=by_month["co2e_total_kg"] * scale,
            mode="lines+markers",
            line=dict(color=CO2E_COLOUR, width=2.5),
            marker=dict(size=7),
            hovertemplate="%{x}: %{y:,.2f} " + chart_text(unit) + "<extra></extra>",
        )
    )
    fig.update_yaxes(title_text=chart_text(unit), rangemode="tozero")
    fig.update_xaxes(title_text="month", type="category")
    return _style(fig, "CO2e by month", 340)


def purchased_recorded_figure(long: pd.DataFrame) -> go.Figure:
    """Purchased against recorded amounts per item (log scale: items differ by orders of magnitude)."""
    fig = _fig()
    for source, colour in (("purchased", COST_COLOUR), ("recorded", PALETTE[7])):
        d = long[long["source"] == source]
        fig.add_trace(
            go.Bar(
                x=d["item"],
                y=d["amount"],
                name=source,
                marker_color=colour,
                hovertemplate="%{x}: %{y:,.0f}<extra>" + source + "</extra>",
            )
        )
    fig.update_layout(barmode="group")
    fig.update_yaxes(title_text="amount (log scale)", type="log")
    return _style(fig, "Purchased and recorded, whole period", 380)
