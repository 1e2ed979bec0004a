"""Figures of the emissions report, on the house template of :mod:`model.present.theme`.

One set of figure builders for the dashboard's Emissions report page (through
``model.present.report_charts``), the page's HTML download and ``gas-ledger report --html``, so the
three show the same charts. Tonnes are t CO2e throughout.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import plotly.graph_objects as go

from model.freshgas import FLOW_BAND_NAMES
from model.present.exports import chart_text
from model.present.palette import AXIS, PALETTE
from model.present.theme import house_style, new_figure
from model.report.lmdi import FACTORS
from model.report.target import target_path_t

__all__ = [
    "flow_band_figure",
    "by_agent_figure",
    "monthly_figure",
    "report_figures",
    "target_figure",
    "use_purchase_figure",
    "waterfall_figure",
]

_UP, _DOWN, _TOTAL = "#b5523b", "#5a9e6f", "#2f6f8f"


def waterfall_figure(
    baseline_t: float, parts_t: dict, period_t: float, baseline_label: str, period_label: str
) -> go.Figure:
    """From the baseline's tonnes, each factor's part, to the period's tonnes (a waterfall)."""
    names = [chart_text(baseline_label)] + list(parts_t) + [chart_text(period_label)]
    values = [baseline_t] + [float(parts_t[f]) for f in parts_t] + [period_t]
    measure = ["absolute"] + ["relative"] * len(parts_t) + ["total"]
    text = [f"{baseline_t:,.1f} t"] + [f"{v:+,.1f} t" for v in values[1:-1]] + [f"{period_t:,.1f} t"]
    fig = new_figure(
        go.Waterfall(
            x=names,
            y=values,
            measure=measure,
            text=text,
            textposition="outside",
            increasing=dict(marker=dict(color=_UP)),
            decreasing=dict(marker=dict(color=_DOWN)),
            totals=dict(marker=dict(color=_TOTAL)),
            connector=dict(line=dict(color=AXIS)),
            hovertemplate="%{x}: %{text}<extra></extra>",
        )
    )
    fig.update_yaxes(title_text="t CO2e", rangemode="tozero")
    fig = house_style(fig, "What drove the change (additive LMDI-I)", 380)
    fig.update_layout(showlegend=False, margin=dict(t=50), height=410)
    return fig


def by_agent_figure(by_agent: pd.DataFrame) -> go.Figure:
    """T CO2e by agent and N2O, one bar per GWP source side by side."""
    cols = [c for c in by_agent.columns if c.startswith("t CO2e (")]
    fig = new_figure()
    for i, c in enumerate(cols):
        fig.add_trace(
            go.Bar(
                name=chart_text(c[len("t CO2e (") : -1]),
                x=by_agent["item"].replace({"nitrous_oxide": "nitrous oxide"}),
                y=by_agent[c],
                marker_color=PALETTE[i % len(PALETTE)],
                hovertemplate="%{x}: %{y:,.2f} t CO2e<extra></extra>",
            )
        )
    fig.update_layout(barmode="group")
    fig.update_yaxes(title_text="t CO2e")
    return house_style(fig, "Emissions by agent, GWP sources side by side", 340)


def monthly_figure(
    period_months: pd.DataFrame, baseline_months: pd.DataFrame | None, period_label: str, baseline_label: str
) -> go.Figure:
    """T CO2e by month of the period, with the baseline's months laid under it by position."""
    fig = new_figure()
    fig.add_trace(
        go.Bar(
            name=chart_text(period_label),
            x=period_months["month"],
            y=period_months["t_co2e"],
            marker_color=PALETTE[0],
            hovertemplate="%{x}: %{y:,.2f} t CO2e<extra></extra>",
        )
    )
    if baseline_months is not None and len(baseline_months):
        n = min(len(baseline_months), len(period_months))
        fig.add_trace(
            go.Scatter(
                name=chart_text(baseline_label) + " (same month of its period)",
                x=list(period_months["month"][:n]),
                y=list(baseline_months["t_co2e"][:n]),
                mode="lines+markers",
                line=dict(color=PALETTE[1], width=2, dash="dot"),
                customdata=list(baseline_months["month"][:n]),
                hovertemplate="%{customdata}: %{y:,.2f} t CO2e<extra></extra>",
            )
        )
    fig.update_yaxes(title_text="t CO2e", rangemode="tozero")
    return house_style(fig, "Use-based emissions by month", 320)


def flow_band_figure(
    period_share: dict, baseline_share: dict | None, period_label: str, baseline_label: str
) -> go.Figure:
    """Share of anaesthetic time in each flow band, period against baseline."""
    fig = new_figure()
    series = [(period_label, period_share, PALETTE[0])]
    if baseline_share is not None:
        series.insert(0, (baseline_label, baseline_share, PALETTE[5]))
    for label, share, colour in series:
        fig.add_trace(
            go.Bar(
                name=chart_text(label),
                x=list(FLOW_BAND_NAMES),
                y=[float(share.get(b, 0.0)) for b in FLOW_BAND_NAMES],
                marker_color=colour,
                hovertemplate="%{x}: %{y:.1%}<extra></extra>",
            )
        )
    fig.update_layout(barmode="group")
    fig.update_yaxes(title_text="share of anaesthetic time", tickformat=".0%")
    fig.update_xaxes(title_text="fresh gas flow band (Baker 1994)")
    return house_style(fig, "Time in each fresh gas flow band", 320)


def target_figure(
    years: np.ndarray, path_t: np.ndarray, points: list[tuple[float, float, str]], target_label: str
) -> go.Figure:
    """The target path (t CO2e a year) and the baseline and period as points at their midpoints."""
    fig = new_figure(
        go.Scatter(
            x=years,
            y=path_t,
            mode="lines",
            name=chart_text("target: " + target_label),
            line=dict(color=PALETTE[2], width=2, dash="dash"),
            hovertemplate="%{x:.1f}: %{y:,.1f} t a year<extra></extra>",
        )
    )
    for i, (x, y, label) in enumerate(points):
        fig.add_trace(
            go.Scatter(
                x=[x],
                y=[y],
                mode="markers+text",
                name=chart_text(label),
                text=[f"{y:,.1f} t"],
                textposition="top center",
                marker=dict(size=12, color=PALETTE[[5, 0][min(i, 1)]]),
                hovertemplate=chart_text(label) + ": %{y:,.1f} t a year<extra></extra>",
            )
        )
    fig.update_yaxes(title_text="t CO2e a year", rangemode="tozero")
    fig.update_xaxes(title_text="year (points at the middle of each period)", dtick=1, tickformat="d")
    return house_style(fig, "Against the target path", 320)


def use_purchase_figure(table: pd.DataFrame) -> go.Figure:
    """Use-based and purchase-based t CO2e per item, side by side."""
    items = table["item"].replace({"nitrous_oxide": "nitrous oxide"})
    fig = new_figure(
        go.Bar(
            name="use-based (records)",
            x=items,
            y=table["use_t_co2e"],
            marker_color=PALETTE[0],
            hovertemplate="%{x}: %{y:,.2f} t CO2e<extra></extra>",
        ),
        go.Bar(
            name="purchase-based (purchases)",
            x=items,
            y=table["purchase_t_co2e"],
            marker_color=PALETTE[1],
            hovertemplate="%{x}: %{y:,.2f} t CO2e<extra></extra>",
        ),
    )
    fig.update_layout(barmode="group")
    fig.update_yaxes(title_text="t CO2e")
    return house_style(fig, "Use-based and purchase-based, by item", 320)


def report_figures(report) -> dict:
    """Every chart of an emissions report, by heading, in the order a report shows them.

    Parameters
    ----------
    report : model.report.EmissionsReport

    Returns
    -------
    dict of str to plotly Figure
        Only the charts that apply: the waterfall needs a baseline with cases, the use and
        purchase bars need purchases, the target path needs a target.
    """
    pr, br, d = report.period, report.baseline, report.decomposition
    out = {}
    if d is not None:
        out["What drove the change"] = waterfall_figure(
            br.co2e_t, {f: d.contribution(f) / 1000.0 for f in FACTORS}, pr.co2e_t, br.period.text, pr.period.text
        )
    out["Emissions by agent"] = by_agent_figure(pr.by_agent)
    out["Emissions by month"] = monthly_figure(
        pr.by_month, br.by_month if br is not None else None, pr.period.text, br.period.text if br is not None else ""
    )
    out["Time in each flow band"] = flow_band_figure(
        pr.figures["band_share"],
        br.figures["band_share"] if br is not None else None,
        pr.period.text,
        br.period.text if br is not None else "",
    )
    if pr.use_vs_purchase is not None:
        out["Use-based and purchase-based"] = use_purchase_figure(pr.use_vs_purchase)
    if report.target is not None:
        t = report.target.target
        t0 = br.period.midpoint_years
        t1 = max(pr.period.midpoint_years, t.year + 0.5 if t.kind == "level" else pr.period.midpoint_years + 2)
        years = np.linspace(t0, t1, 60)
        out["Against the target path"] = target_figure(
            years,
            target_path_t(t, br.period, br.annual_t, years),
            [
                (t0, br.annual_t, f"baseline {br.period.text}"),
                (pr.period.midpoint_years, pr.annual_t, f"period {pr.period.text}"),
            ],
            t.label,
        )
    return out
