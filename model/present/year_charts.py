"""Figures of a department's year and of a comparison of two years (plotly, house template).

Bottles and cost by month, CO2e by source, the P5-P95 range through the year, paired
differences.
"""

from __future__ import annotations

import pandas as pd
import plotly.graph_objects as go

from model.present.exports import chart_text
from model.present.palette import AGENT_COLOURS, COST_COLOUR, LESS_COLOUR, MORE_COLOUR, TEXT, rgba
from model.present.theme import house_style as _style
from model.reference import VOLATILES
from model.year.inputs import MONTHS


def monthly_bottles_figure(monthly: pd.DataFrame) -> go.Figure:
    """Bottles bought per month, one bar per agent used."""
    fig = go.Figure()
    for a in VOLATILES:
        col = f"bottles_{a}"
        if col in monthly and monthly[col].sum() > 0:
            fig.add_trace(
                go.Bar(
                    name=a.capitalize(),
                    x=monthly["month"],
                    y=monthly[col],
                    marker_color=AGENT_COLOURS[a],
                    hovertemplate="%{x}: %{y:.0f} bottles<extra>" + a + "</extra>",
                )
            )
    fig.update_layout(barmode="group")
    fig.update_yaxes(title_text="bottles")
    fig = _style(fig, "Bottles bought per month", 340)
    fig.update_layout(legend=dict(orientation="h", yanchor="top", y=-0.18, x=0))
    return fig


def monthly_cost_figure(monthly: pd.DataFrame, currency: str) -> go.Figure:
    """Cost per month of a year (bars), in ``currency``."""
    fig = go.Figure(
        go.Bar(
            x=monthly["month"],
            y=monthly["cost_total"],
            marker_color=COST_COLOUR,
            hovertemplate="%{x}: %{y:,.0f} " + chart_text(currency) + "<extra></extra>",
        )
    )
    fig.update_yaxes(title_text=chart_text(currency))
    return _style(fig, "Cost per month", 340)


def co2e_by_source_figure(totals: dict) -> go.Figure:
    """Tonnes CO2e by volatile agent and nitrous oxide."""
    labels, values, colours = [], [], []
    for a in VOLATILES:
        v = totals.get(f"co2e_{a}_t", 0.0)
        if v > 0:
            labels.append(a.capitalize())
            values.append(v)
            colours.append(AGENT_COLOURS[a])
    labels.append("Nitrous oxide")
    values.append(totals.get("co2e_nitrous_oxide_t", 0.0))
    colours.append(AGENT_COLOURS["nitrous_oxide"])
    fig = go.Figure(
        go.Bar(
            x=values,
            y=labels,
            orientation="h",
            marker_color=colours,
            text=[f"{v:,.1f} t" for v in values],
            textposition="auto",
            hovertemplate="%{y}: %{x:,.2f} t CO2e<extra></extra>",
        )
    )
    fig.update_yaxes(autorange="reversed")
    fig.update_xaxes(title_text="t CO2e")
    return _style(fig, "CO2e by source", 300)


def fan_figure(
    fan: pd.DataFrame, figure: str, unit: str, colour: str = COST_COLOUR, range_label: str = "P5-P95"
) -> go.Figure:
    """Cumulative figure through the year: P50 line inside its P5-P95 range.

    ``range_label`` names the range in the legend (a year's ``range_label``: what it holds).
    """
    d = fan[fan["figure"] == figure]
    x = list(d["month"])
    fig = go.Figure()
    fig.add_trace(
        go.Scatter(
            x=x + x[::-1],
            y=list(d["p95"]) + list(d["p5"])[::-1],
            fill="toself",
            fillcolor=rgba(colour, 0.18),
            line=dict(width=0),
            name=range_label,
            hoverinfo="skip",
        )
    )
    fig.add_trace(
        go.Scatter(
            x=x,
            y=d["p50"],
            mode="lines+markers",
            line=dict(color=colour, width=2.5),
            name="P50",
            hovertemplate="%{x}: %{y:,.1f} " + chart_text(unit) + "<extra>P50</extra>",
        )
    )
    fig.update_xaxes(categoryorder="array", categoryarray=list(MONTHS))
    fig.update_yaxes(title_text=chart_text(unit))
    fig = _style(fig, f"{figure[0].upper()}{figure[1:]} through the year", 320)
    fig.update_layout(legend=dict(orientation="h", yanchor="top", y=-0.18, x=0))
    return fig


def difference_figure(summary: pd.DataFrame, keys: list[tuple[str, str]]) -> go.Figure:
    """Paired differences (proposal - baseline) in % of the baseline: P50 bars, P5-P95 whiskers."""
    rows = summary.set_index("key")
    labels = [label for _, label in keys]
    base = [abs(rows.loc[k, "baseline"]) or 1.0 for k, _ in keys]
    p50 = [rows.loc[k, "p50"] / b * 100 for (k, _), b in zip(keys, base, strict=True)]
    lo = [(rows.loc[k, "p50"] - rows.loc[k, "p5"]) / b * 100 for (k, _), b in zip(keys, base, strict=True)]
    hi = [(rows.loc[k, "p95"] - rows.loc[k, "p50"]) / b * 100 for (k, _), b in zip(keys, base, strict=True)]
    colours = [LESS_COLOUR if v <= 0 else MORE_COLOUR for v in p50]
    fig = go.Figure(
        go.Bar(
            x=labels,
            y=p50,
            marker_color=colours,
            error_y=dict(type="data", symmetric=False, array=hi, arrayminus=lo, color=TEXT),
            hovertemplate="%{x}: %{y:+.1f} %<extra>P50</extra>",
        )
    )
    fig.add_hline(y=0, line=dict(color="#546e7a", width=1))
    fig.update_yaxes(title_text="% of the baseline year")
    return _style(fig, "Change per year in % of the baseline (P50, whiskers P5-P95)", 340)
