"""The house look of every plotly figure: a template of our own and the layout helpers.

The dashboard's figures (``model.present.case_charts``, ``ui.year_views``) and the report figures
(:mod:`model.present.report_charts`) are all built on it, so a chart looks the same on a page, in a
page's HTML download and in the command line's HTML report.
"""

from __future__ import annotations

import plotly.graph_objects as go
import plotly.io as pio

from model.present.palette import AXIS, GRID, PALETTE, TEXT

__all__ = ["FONT", "TEMPLATE", "house_layout", "house_style", "new_figure"]

#: Font of every label: the reader's system font, in the house text colour.
FONT = dict(family="system-ui, -apple-system, Segoe UI, sans-serif", size=13, color=TEXT)
#: Name of the house template (registered with plotly when this module is imported).
TEMPLATE = "fresh_gas_ledger"
# A small template of our own: cheaper to apply than the built-in ones (plotly copies the
# whole template into every figure) and the house look in one place.
pio.templates[TEMPLATE] = go.layout.Template(
    layout=dict(
        font=FONT,
        colorway=list(PALETTE),
        paper_bgcolor="white",
        plot_bgcolor="white",
        # automargin: the margins grow to hold tick labels and axis titles, so no label is cut
        # at the figure's edge (in the dashboard and in the HTML reports alike).
        xaxis=dict(
            gridcolor=GRID,
            linecolor=AXIS,
            zerolinecolor=GRID,
            ticks="outside",
            tickcolor=AXIS,
            automargin=True,
            title=dict(standoff=8),
        ),
        # Thousands separated on value axes ("2,000", never "2k"); no value axis here is a date.
        yaxis=dict(
            gridcolor=GRID, linecolor=AXIS, zerolinecolor=GRID, automargin=True, title=dict(standoff=8), tickformat=","
        ),
        hoverlabel=dict(font=dict(family=FONT["family"])),
    )
)


def new_figure(*data) -> go.Figure:
    """A new figure of the given traces on the house template (plotly's default template is never copied)."""
    return go.Figure(data=list(data), layout=dict(template=TEMPLATE))


def house_layout(title: str = "", height: int = 360, legend_right: bool = False) -> dict:
    """The house layout: title top left, legend under the title (or at the right), quiet grid.

    Parameters
    ----------
    title : str
        Figure title (empty: none, and a thinner top margin).
    height : int
        Height of the plotting area. [px]
    legend_right : bool
        Legend in a column at the right rather than in a row under the title.

    Returns
    -------
    dict
        Layout keywords for ``Figure.update_layout`` (or a figure's ``layout``).
    """
    legend = (
        dict(orientation="v", yanchor="top", y=1.0, x=1.02, xanchor="left")
        if legend_right
        else dict(orientation="h", yanchor="bottom", y=1.02, x=0, xanchor="left")
    )
    top = 20 if not title else (60 if legend_right else 95)
    return dict(
        title=dict(text=title, x=0.0, xanchor="left", y=0.985, yref="container", yanchor="top", font=dict(size=15))
        if title
        else None,
        template=TEMPLATE,
        height=height + top - 20,
        margin=dict(l=10, r=10, t=top, b=10),
        legend=legend,
    )


def house_style(fig: go.Figure, title: str = "", height: int = 360, legend_right: bool = False) -> go.Figure:
    """The house layout (:func:`house_layout`) applied to ``fig``, which is returned."""
    fig.update_layout(**house_layout(title, height, legend_right))
    return fig
