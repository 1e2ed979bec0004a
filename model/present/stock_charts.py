"""Charts of the orders plan: stock on hand and on order by month, with the forecast range."""

from __future__ import annotations

import plotly.graph_objects as go


def stock_chart(result, item: str) -> go.Figure:
    """Bottles on hand (end of month, P50 use), on order, the order-up-to level and the use range.

    Parameters
    ----------
    result : model.stock.orders.OrdersResult
        A worked-out orders plan.
    item : str
        One of its items.

    Returns
    -------
    plotly Figure
        Bars of bottles on hand and on order; lines of use P50 with its P5-P95 range and the
        order-up-to level, all in bottles. [bottles]
    """
    sp = result.stock[item]
    f = result.forecasts[item]
    b = sp.item.bottle_ml
    x = list(f.months)
    fig = go.Figure()
    fig.add_bar(x=x, y=sp.closing_ml / b, name="On hand, month end (P50 use)")
    fig.add_bar(x=x, y=sp.on_order_bottles, name="On order")
    fig.add_scatter(x=x, y=f.p95 / b, mode="lines", line={"width": 0}, showlegend=False, hoverinfo="skip")
    fig.add_scatter(x=x, y=f.p5 / b, mode="lines", line={"width": 0}, fill="tonexty", name="Use a month, P5-P95 range")
    fig.add_scatter(x=x, y=f.p50 / b, mode="lines+markers", name="Use a month, P50")
    fig.add_scatter(x=x, y=sp.order_up_to_ml / b, mode="lines", line={"dash": "dash"}, name="Order-up-to level")
    fig.update_layout(
        barmode="stack", yaxis_title="bottles" if item != "nitrous_oxide" else "cylinders", xaxis_title="month"
    )
    return fig
