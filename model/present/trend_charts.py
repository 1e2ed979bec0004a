"""Control-chart figures of the trends: the measure by month, centre and limits by phase, signals marked."""

from __future__ import annotations

import numpy as np
import pandas as pd
import plotly.graph_objects as go

from model.present.exports import chart_text
from model.present.palette import AXIS, DANGER, PALETTE
from model.present.theme import house_style, new_figure
from model.trends.summary import CHART_MEASURES


def control_chart_figure(chart: pd.DataFrame, effect=None, title: str | None = None) -> go.Figure:
    """One control chart: points, centre and limits (broken at a change of phase), signals in red.

    Parameters
    ----------
    chart : DataFrame
        The rows of one group and measure of :attr:`model.trends.Trends.charts`.
    effect : InterruptedSeries or None
        Its fitted line and counterfactual are drawn when given.
    title : str or None
        Default: the measure's label.
    """
    m = str(chart["measure"].iloc[0])
    label = CHART_MEASURES.get(m, m)
    x = chart["month"].tolist()
    fig = new_figure()

    # Limits drawn per phase: None between phases breaks the lines there.
    def per_phase(col):
        out, prev = [], None
        for ph, v in zip(chart["phase"], chart[col], strict=True):
            if prev is not None and ph != prev:
                out.append(None)
            out.append(None if not np.isfinite(v) else float(v))
            prev = ph
        return out

    xs, prev = [], None
    for ph, month in zip(chart["phase"], x, strict=True):
        if prev is not None and ph != prev:
            xs.append(None)
        xs.append(month)
        prev = ph
    for col, name, dash in (
        ("ucl", "upper limit", "dash"),
        ("centre", "centre line", "solid"),
        ("lcl", "lower limit", "dash"),
    ):
        fig.add_trace(
            go.Scatter(
                x=xs,
                y=per_phase(col),
                name=name,
                mode="lines",
                line=dict(color=AXIS, width=1, dash=dash),
                hoverinfo="skip",
            )
        )
    fig.add_trace(
        go.Scatter(
            x=x,
            y=chart["value"],
            name=chart_text(label),
            mode="lines+markers",
            line=dict(color=PALETTE[0], width=2),
            hovertemplate="%{x}: %{y:,.3g}<extra></extra>",
        )
    )
    sig = chart[chart["signal"]]
    if len(sig):
        fig.add_trace(
            go.Scatter(
                x=sig["month"],
                y=sig["value"],
                name="signal (listed beneath)",
                mode="markers",
                marker=dict(color=DANGER, size=11, symbol="circle-open", line=dict(width=2)),
                hovertemplate="%{x}: signal<extra></extra>",
            )
        )
    if effect is not None:
        fig.add_trace(
            go.Scatter(x=x, y=effect.fitted, name="segmented fit", mode="lines", line=dict(color=PALETTE[1], width=2))
        )
        k = effect.n_before
        fig.add_trace(
            go.Scatter(
                x=x[k:],
                y=effect.counterfactual[k:],
                name="line before carried on",
                mode="lines",
                line=dict(color=PALETTE[1], width=2, dash="dot"),
            )
        )
    fig.update_yaxes(title_text=chart_text(label))
    kind = "p-chart" if chart["chart"].iloc[0] == "p" else "individuals chart"
    return house_style(fig, chart_text(title or f"{label} ({kind})"), 320)


def trends_html(trends, caution: str, records: str = "") -> str:
    """The trends as one self-contained HTML file: the charts first, then the signals and the effect in words.

    Parameters
    ----------
    trends : model.trends.Trends
    caution : str
        The standing caution.
    records : str
        What was read, for the inputs table.
    """
    from model.present.exports import html_export

    figures = []
    for (group, m), chart in trends.charts.groupby(["group", "measure"], sort=False):
        title = CHART_MEASURES.get(m, m) + ("" if group == "department" else f" ({group})")
        figures.append((title, control_chart_figure(chart, trends.effects.get((group, m)), title)))
    runs = [
        f"{CHART_MEASURES[m]}{'' if g == 'department' else ' (' + g + ')'}: longest run {r['longest_run']} "
        f"(limit {r['run_limit']}), crossings {r['crossings']} (fewest {r['crossings_limit']}): "
        + ("signal" if r["signal"] else "no signal")
        for (g, m), r in trends.run_checks.items()
    ]
    sections = {
        "Signals (control-chart rules)": trends.signals or ["None."],
        "Run-chart checks (Anhøj J, Olesen AV, PLoS One 2014;9(11):e113825)": runs,
    }
    if trends.effects:
        sections[f"Programme from {trends.change_month}: interrupted time series"] = trends.effect_sentences()
    return html_export(
        "Trends",
        inputs={"Records": records, "Series": trends.level, "Programme start": trends.change_month or "none"},
        tables={"Monthly measures": trends.measures},
        figures=figures,
        warnings=list(trends.notes),
        cautions=[caution],
        sections=sections,
        figures_first=True,
    )
