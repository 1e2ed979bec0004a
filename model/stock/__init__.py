"""Stock and orders: a periodic-review order-up-to plan for agent bottles, month by month."""

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
    "StockItem",
    "StockPlan",
    "check_item",
    "order_up_to_level",
    "plan_stock",
    "safety_stock",
    "service_z",
]
