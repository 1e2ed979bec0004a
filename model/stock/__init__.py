"""Stock and orders: a periodic-review order-up-to plan for agent bottles, month by month."""

from .forecast import Forecast, change_practice, forecast_from_history, forecast_from_year, monthly_history
from .policy import (
    StockItem,
    StockPlan,
    check_item,
    order_up_to_level,
    plan_stock,
    safety_stock,
    service_z,
)

__all__ = [
    "Forecast",
    "change_practice",
    "forecast_from_history",
    "forecast_from_year",
    "monthly_history",
    "StockItem",
    "StockPlan",
    "check_item",
    "order_up_to_level",
    "plan_stock",
    "safety_stock",
    "service_z",
]
