"""An orders plan file (TOML) read and worked out: the forecast, the orders and the stock per item."""

from __future__ import annotations

import math
import tomllib
from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np
import pandas as pd

from ..base.errors import InputError
from .forecast import Forecast, change_practice, forecast_from_history, forecast_from_year, monthly_history
from .policy import StockItem, StockPlan, check_item, plan_stock

#: What a plan item may set, with the allowed text of its message.
_ITEM_FIELDS = {
    "opening_bottles": "a whole number of bottles, 0 or more",
    "opening_open_ml": "mL of liquid in part-used bottles, 0 or more",
    "lead_months": "months, 0 to 12",
    "review_months": "a whole number of months, 1 to 12",
    "service_level": "a fraction, 0.5 to below 1",
    "pack_bottles": "a whole number of bottles",
    "order_multiple": "a whole number of bottles, a multiple of pack_bottles",
    "shelf_life_months": "months, more than 0",
    "cylinder_l": "litres of gas per cylinder (nitrous_oxide only)",
}
_TOP = ("title", "forecast", "scenario", "history", "draws", "seed", "defaults", "items", "practice")


@dataclass
class OrdersPlan:
    """What an orders file asks for (paths resolved against the file's folder)."""

    title: str
    forecast: str  # "year" or "history"
    scenario: Path | None
    history: list[Path]
    draws: int
    seed: int
    items: list[StockItem]
    practice: list[dict] = field(default_factory=list)  # {"item", "from_month", "factor"}


@dataclass
class OrdersResult:
    """The forecast and the stock plan of every item of an orders plan."""

    plan: OrdersPlan
    forecasts: dict[str, Forecast]
    stock: dict[str, StockPlan]
    currency: str
    #: The Department year's cost of the plan's items (its budget for them; forecast = year only). [currency]
    year_budget: float | None = None

    def orders_table(self) -> pd.DataFrame:
        """One row per order: item, month ordered and delivered, bottles, cost, stock after."""
        rows = []
        for name, sp in self.stock.items():
            months = self.forecasts[name].months
            for r in sp.orders():
                d = r["month_delivered"]
                rows.append(
                    {
                        "item": name,
                        "order_month": months[r["month_ordered"]],
                        "delivery_month": months[d] if d < len(months) else f"after {months[-1]}",
                        "bottles": r["bottles"],
                        f"cost_{self.currency}": r["cost"],
                        "stock_after_bottles": None
                        if r["stock_after_bottles"] is None
                        else round(r["stock_after_bottles"], 2),
                    }
                )
        cols = ["item", "order_month", "delivery_month", "bottles", f"cost_{self.currency}", "stock_after_bottles"]
        return pd.DataFrame(rows, columns=cols)

    def months_table(self) -> pd.DataFrame:
        """One row per item and month: forecast range, stock, orders, expiry, stock-out chance, cash."""
        frames = []
        for name, sp in self.stock.items():
            f = self.forecasts[name]
            b = sp.item.bottle_ml
            frames.append(
                pd.DataFrame(
                    {
                        "item": name,
                        "month": f.months,
                        f"use_p5_{f.unit}": f.p5,
                        f"use_p50_{f.unit}": f.p50,
                        f"use_p95_{f.unit}": f.p95,
                        "opening_bottles": sp.opening_ml / b,
                        "received_bottles": sp.received_bottles,
                        "used_bottles": sp.used_ml / b,
                        "expired_bottles": sp.expired_bottles,
                        "closing_bottles": sp.closing_ml / b,
                        "on_order_bottles": sp.on_order_bottles,
                        "ordered_bottles": sp.ordered_bottles,
                        "order_up_to_bottles": sp.order_up_to_ml / b,
                        "stockout_chance": sp.stockout_chance,
                        f"cash_{self.currency}": sp.cash,
                    }
                )
            )
        return pd.concat(frames, ignore_index=True)

    def cash_by_month(self) -> pd.DataFrame:
        """Paid for deliveries per month, all items, in the plan's currency."""
        t = self.months_table()
        return t.groupby("month", sort=False)[f"cash_{self.currency}"].sum().reset_index()

    def to_dict(self) -> dict:
        """Machine-readable form with stable keys."""
        from ..base.jsonable import to_json_value

        return to_json_value(
            {
                "title": self.plan.title,
                "currency": self.currency,
                "orders": self.orders_table().to_dict("records"),
                "months": self.months_table().to_dict("records"),
                "forecast": {
                    k: {"source": f.source, "unit": f.unit, "holdout": f.holdout} for k, f in self.forecasts.items()
                },
                "total_cost": float(self.months_table()[f"cash_{self.currency}"].sum()),
                "year_budget": self.year_budget,
            }
        )


def _num(table: dict, key: str, where: str, allowed: str, whole: bool = False):
    v = table[key]
    if isinstance(v, bool) or not isinstance(v, int | float) or (whole and int(v) != v) or not math.isfinite(v):
        raise InputError(f"{where}.{key}", v, allowed)
    return int(v) if whole else float(v)


def read_orders_plan(path, reference) -> OrdersPlan:
    """Read an orders plan file (docs/formats.md, "Orders plan"); :class:`InputError` names a bad field."""
    from ..reference import VOLATILES

    path = Path(path)
    try:
        data = tomllib.loads(path.read_text(encoding="utf-8"))
    except OSError as e:
        raise InputError(str(path), "(file)", f"a readable file ({e.strerror})") from None
    except (tomllib.TOMLDecodeError, UnicodeDecodeError) as e:
        raise InputError(str(path), "(file)", f"TOML text ({e})") from None
    where = path.name
    for key in data:
        if key not in _TOP:
            raise InputError(f"{where}: {key}", key, "one of " + ", ".join(_TOP))
    kind = data.get("forecast", "year")
    if kind not in ("year", "history"):
        raise InputError(f"{where}: forecast", kind, "year or history")
    base = path.parent
    scenario = base / data["scenario"] if "scenario" in data else None
    history = [base / p for p in data.get("history", [])]
    if kind == "year" and scenario is None:
        raise InputError(f"{where}: scenario", "(missing)", "a Department year scenario file when forecast = year")
    if kind == "history" and not history:
        raise InputError(f"{where}: history", "(missing)", "a list of purchases files when forecast = history")
    draws = _num(data, "draws", where, "a whole number 1 to 2000", True) if "draws" in data else 200
    if not 1 <= draws <= 2000:
        raise InputError(f"{where}: draws", draws, "a whole number 1 to 2000")
    seed = _num(data, "seed", where, "a whole number 0 or more", True) if "seed" in data else 1
    defaults = data.get("defaults", {})
    items_t = data.get("items", {})
    if not isinstance(items_t, dict) or not items_t:
        raise InputError(f"{where}: items", "(missing)", "an [items.<agent>] table per agent or nitrous_oxide")
    known = (*VOLATILES, "nitrous_oxide")
    items = [
        _read_item(name, {**defaults, **raw}, f"{where}: items.{name}", known, reference)
        for name, raw in items_t.items()
    ]
    practice = [_read_practice(p, f"{where}: practice[{i}]", items) for i, p in enumerate(data.get("practice", []))]
    title = str(data.get("title", path.stem))
    return OrdersPlan(title, kind, scenario, history, draws, seed, items, practice)


def _read_item(name: str, table: dict, at: str, known, reference) -> StockItem:
    """One ``[items.<name>]`` table (with the defaults) as a checked :class:`StockItem`."""
    if name not in known:
        raise InputError(at, name, "an agent: one of " + ", ".join(known))
    values: dict = {}
    for key in table:
        if key not in _ITEM_FIELDS:
            raise InputError(f"{at}.{key}", key, "one of " + ", ".join(_ITEM_FIELDS))
        whole = key in ("opening_bottles", "review_months", "pack_bottles", "order_multiple")
        values[key] = _num(table, key, at, _ITEM_FIELDS[key], whole)
    cyl = values.pop("cylinder_l", None)
    if name == "nitrous_oxide":
        if cyl is None or cyl <= 0:
            raise InputError(f"{at}.cylinder_l", cyl, "litres of gas per cylinder, more than 0")
        bottle, price = cyl, cyl / 1000.0 * reference.prices.nitrous_oxide_per_1000_l
    else:
        bottle, price = reference.volatile(name).bottle_volume, reference.prices.bottle.get(name, 0.0)
    item = StockItem(agent=name, bottle_ml=float(bottle), price_per_bottle=float(price), **values)
    try:
        return check_item(item, known)
    except InputError as e:
        field = e.field.removeprefix(f"stock.{name}").lstrip(".")
        raise InputError(f"{at}.{field}" if field else at, e.value, e.allowed) from None


def _read_practice(p: dict, at: str, items) -> dict:
    """One ``[[practice]]`` entry: item, month index from which, factor."""
    if p.get("item") not in [it.agent for it in items]:
        raise InputError(f"{at}.item", p.get("item"), "an item of the plan")
    month = p.get("from_month")
    if not isinstance(month, int) or isinstance(month, bool) or not 1 <= month <= 12:
        raise InputError(f"{at}.from_month", month, "a month number of the plan, 1 to 12")
    factor = p.get("factor")
    if isinstance(factor, bool) or not isinstance(factor, int | float) or not 0 <= factor < math.inf:
        raise InputError(f"{at}.factor", factor, "use after / use before, 0 or more")
    return {"item": p["item"], "from_month": month - 1, "factor": float(factor)}


#: Item fields a what-if may change for every item at once.
WHAT_IF_FIELDS = ("lead_months", "service_level", "order_multiple", "pack_bottles", "review_months")


def work_out_orders(plan: OrdersPlan, reference, overrides: dict | None = None) -> OrdersResult:
    """Forecast and stock plan of every item.

    ``overrides`` (keys of :data:`WHAT_IF_FIELDS`) replace every item's value, for a what-if;
    a bad value raises :class:`InputError` naming the item and field.
    """
    overrides = dict(overrides or {})
    for key in overrides:
        if key not in WHAT_IF_FIELDS:
            raise InputError("what-if", key, "one of " + ", ".join(WHAT_IF_FIELDS))
    if plan.forecast == "year":
        from ..io.scenario import load_scenario
        from ..year.result import compute_year

        year = compute_year(load_scenario(plan.scenario), reference, draws=plan.draws, seed=plan.seed)
        forecasts = {it.agent: forecast_from_year(year, it.agent) for it in plan.items}
        budget = float(sum(year.totals.get(f"cost_{it.agent}", 0.0) for it in plan.items))
    else:
        from ..io.purchases import read_purchases

        budget = None

        table = pd.concat([read_purchases(p, reference) for p in plan.history], ignore_index=True)
        forecasts = {it.agent: forecast_from_history(monthly_history(table, it.agent), it.agent) for it in plan.items}
    for p in plan.practice:
        forecasts[p["item"]] = change_practice(forecasts[p["item"]], p["from_month"], p["factor"])
    stock = {}
    for it in plan.items:
        if overrides:
            it = check_item(replace(it, **overrides))
        f = forecasts[it.agent]
        stock[it.agent] = plan_stock(it, f.p50, f.sigma, draws_ml=f.draws, seed=plan.seed)
    return OrdersResult(plan, forecasts, stock, reference.prices.currency, budget)


def total_stock_value(result: OrdersResult) -> np.ndarray:
    """Money held in stock at each month's end, all items (closing bottles x price), in currency."""
    return np.sum(
        [sp.closing_ml / sp.item.bottle_ml * sp.item.price_per_bottle for sp in result.stock.values()], axis=0
    )


#: Said wherever the order table is shown.
FORECAST_CAUTION = (
    "A forecast is not a guarantee: use can differ from it (see the hold-out error). "
    "Keep local minimum stock rules and check orders with pharmacy before placing them."
)


def _phase_out_lines(result) -> list[str]:
    """For each item stopped by a change of practice: the last order and the stock left."""
    lines = []
    for p in result.plan.practice:
        if p["factor"] != 0:
            continue
        sp, f = result.stock[p["item"]], result.forecasts[p["item"]]
        placed = np.flatnonzero(sp.ordered_bottles)
        last = f"last order in {f.months[placed[-1]]}" if placed.size else "no order needed"
        left = sp.closing_ml[-1] / sp.item.bottle_ml
        lines.append(
            f"{p['item']} stops from {f.months[p['from_month']]}: {last}; {left:.1f} bottles' worth left at the end"
            f" ({left * sp.item.price_per_bottle:,.0f} {result.currency})"
        )
    return lines


def _holdout_lines(result) -> list[str]:
    lines = []
    for name, f in result.forecasts.items():
        if f.holdout:
            h = f.holdout
            lines.append(
                f"{name}: the last 3 months held out were forecast {h['mean_abs_error']:,.0f} {f.unit} off a month"
                f" on average ({h['mean_abs_pct_error']:.0f} %), {h['inside_p5_p95']} of 3 inside P5-P95"
            )
        else:
            lines.append(f"{name}: no hold-out check (a model year, not history)")
    return lines


def notes(result) -> list[str]:
    """Provenance and cautions written with every export of the orders (one line each)."""
    import importlib.metadata

    from ..cautions import STANDING_CAUTION

    try:
        version = importlib.metadata.version("fresh-gas-ledger")
    except importlib.metadata.PackageNotFoundError:
        version = "unknown (not installed)"
    return [
        f"Orders plan: {result.plan.title}",
        f"gas-ledger (fresh-gas-ledger) {version}",
        "Method: periodic-review order-up-to (R, S) policy, Silver, Pyke and Thomas 2017 (docs/methods.md, "
        "Stock and orders)",
        *[f"Forecast of {k}: {f.source}" for k, f in result.forecasts.items()],
        *_holdout_lines(result),
        *_phase_out_lines(result),
        FORECAST_CAUTION,
        STANDING_CAUTION,
    ]
