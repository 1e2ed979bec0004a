"""Periodic-review order-up-to (R, S) policy for bottles of agent, carried month to month.

Every review period R the inventory position (on hand plus on order) is raised to the
order-up-to level S = forecast use over (L + R) + safety stock, with the safety stock
z x sigma x sqrt(L + R) at the service level's normal quantile z.

References
----------
.. [1] Silver, E. A., Pyke, D. F. and Thomas, D. J., *Inventory and Production Management
   in Supply Chains*, 4th ed., CRC Press, 2017, chapter on periodic-review (R, S) systems
   (formula from memory: it could not be read here).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.stats import norm

from ..base.errors import InputError

#: Longest lead time accepted. [months]
MAX_LEAD_MONTHS = 12.0


def service_z(service_level):
    """Normal quantile z of a service level (chance of no stock-out in a review cycle).

    Parameters
    ----------
    service_level : array_like
        Cycle service level, 0 < p < 1. [fraction]

    Returns
    -------
    ndarray
        z with Phi(z) = service_level. [-]

    References
    ----------
    .. [1] Silver, Pyke and Thomas 2017 (from memory): cycle service level P1 = Phi(k).
    """
    return norm.ppf(np.asarray(service_level, dtype=float))


def safety_stock(z, sigma_per_month, lead_months, review_months):
    """Safety stock of an (R, S) policy: z x sigma x sqrt(L + R).

    Parameters
    ----------
    z : array_like
        Safety factor. [-]
    sigma_per_month : array_like
        Standard deviation of one month's use (forecast error). [mL]
    lead_months, review_months : array_like
        Lead time L and review period R. [months]

    Returns
    -------
    ndarray
        Safety stock. [mL]

    References
    ----------
    .. [1] Silver, Pyke and Thomas 2017, (R, S) system (from memory).
    """
    return np.asarray(z) * np.asarray(sigma_per_month) * np.sqrt(np.asarray(lead_months) + np.asarray(review_months))


def order_up_to_level(mean_per_month, sigma_per_month, lead_months, review_months, service_level):
    """Order-up-to level S = mean x (L + R) + z x sigma x sqrt(L + R).

    Parameters
    ----------
    mean_per_month, sigma_per_month : array_like
        Forecast use per month and its standard deviation. [mL]
    lead_months, review_months : array_like
        Lead time L and review period R. [months]
    service_level : array_like
        Cycle service level. [fraction]

    Returns
    -------
    ndarray
        Order-up-to level. [mL]

    References
    ----------
    .. [1] Silver, Pyke and Thomas 2017, (R, S) system (from memory).
    """
    cover = np.asarray(lead_months) + np.asarray(review_months)
    return np.asarray(mean_per_month) * cover + safety_stock(
        service_z(service_level), sigma_per_month, lead_months, review_months
    )


@dataclass(frozen=True)
class StockItem:
    """What the department holds and buys of one agent.

    Attributes
    ----------
    agent : str
        Agent key (``model.reference.AGENTS``).
    bottle_ml : float
        Liquid per bottle. [mL]
    price_per_bottle : float
        Price of one bottle at the Reference prices. [currency]
    opening_bottles : int
        Full, unopened bottles on hand at the start. [bottles]
    opening_open_ml : float
        Liquid in part-used bottles (in vaporizers and opened bottles). [mL]
    lead_months : float
        Lead time from order to delivery. [months]
    review_months : int
        Review period: an order may be placed every this many months. [months]
    service_level : float
        Chance of no stock-out in a review cycle. [fraction]
    pack_bottles : int
        Bottles per pack, the smallest unit sold. [bottles]
    order_multiple : int
        Bottles per case; orders are whole cases, a whole number of packs. [bottles]
    shelf_life_months : float
        Shelf life of an unopened bottle from delivery (opening stock counts from the start). [months]
    """

    agent: str
    bottle_ml: float
    price_per_bottle: float
    opening_bottles: int = 0
    opening_open_ml: float = 0.0
    lead_months: float = 1.0
    review_months: int = 1
    service_level: float = 0.95
    pack_bottles: int = 1
    order_multiple: int = 1
    shelf_life_months: float = 24.0


def check_item(item: StockItem, known_agents=None) -> StockItem:
    """The item unchanged, or :class:`InputError` naming the first bad field."""
    name = f"stock.{item.agent}"
    if known_agents is not None and item.agent not in known_agents:
        raise InputError(f"{name}: agent", item.agent, "one of " + ", ".join(sorted(known_agents)))
    if not item.bottle_ml > 0:
        raise InputError(f"{name}.bottle_ml", item.bottle_ml, "more than 0 mL")
    if item.price_per_bottle < 0:
        raise InputError(f"{name}.price_per_bottle", item.price_per_bottle, "0 or more")
    if item.opening_bottles < 0 or int(item.opening_bottles) != item.opening_bottles:
        raise InputError(f"{name}.opening_bottles", item.opening_bottles, "a whole number of bottles, 0 or more")
    if item.opening_open_ml < 0:
        raise InputError(f"{name}.opening_open_ml", item.opening_open_ml, "0 mL or more")
    if not 0 <= item.lead_months <= MAX_LEAD_MONTHS:
        raise InputError(f"{name}.lead_months", item.lead_months, f"0 to {MAX_LEAD_MONTHS:g} months (a year at most)")
    if int(item.review_months) != item.review_months or not 1 <= item.review_months <= 12:
        raise InputError(f"{name}.review_months", item.review_months, "a whole number of months, 1 to 12")
    if not 0.5 <= item.service_level < 1:
        raise InputError(f"{name}.service_level", item.service_level, "0.5 or more and below 1 (e.g. 0.95)")
    if item.pack_bottles < 1 or int(item.pack_bottles) != item.pack_bottles:
        raise InputError(f"{name}.pack_bottles", item.pack_bottles, "a whole number of bottles, 1 or more")
    if item.order_multiple < 1 or item.order_multiple % item.pack_bottles:
        raise InputError(
            f"{name}.order_multiple", item.order_multiple, f"a whole multiple of pack_bottles ({item.pack_bottles})"
        )
    if not item.shelf_life_months > 0:
        raise InputError(f"{name}.shelf_life_months", item.shelf_life_months, "more than 0 months")
    return item


@dataclass
class StockPlan:
    """An agent's orders and its stock month by month.

    ``orders`` rows: month index ordered, month index delivered, bottles, cost, expected
    stock after delivery (P50 use) in bottles' worth. The monthly arrays are at P50 use
    (``*_ml``) except ``stockout_chance`` and ``expired_p95_bottles`` over the use draws.
    """

    item: StockItem
    order_up_to_ml: np.ndarray  # (M,) S at each month (used at review months)
    safety_ml: np.ndarray  # (M,)
    ordered_bottles: np.ndarray  # (M,) bottles ordered in the month
    received_bottles: np.ndarray  # (M,) bottles delivered at the start of the month
    opening_ml: np.ndarray  # (M,) on hand at the start of the month, before delivery
    used_ml: np.ndarray  # (M,)
    short_ml: np.ndarray  # (M,) use that found no stock
    expired_bottles: np.ndarray  # (M,) unopened bottles past shelf life at the month's end
    closing_ml: np.ndarray  # (M,)
    on_order_bottles: np.ndarray  # (M,) ordered and not yet delivered, at the month's end
    stockout_chance: np.ndarray  # (M,) share of use draws with a shortfall in the month
    cash: np.ndarray  # (M,) paid for the month's deliveries [currency]

    @property
    def months(self) -> int:
        """Number of months planned."""
        return len(self.used_ml)

    def orders(self) -> list[dict]:
        """One row per order: month ordered and delivered (indices), bottles, cost, stock after."""
        delay = math.ceil(self.item.lead_months - 1e-9)
        rows = []
        for m in np.flatnonzero(self.ordered_bottles):
            d = m + delay
            after = None
            if d < self.months:
                after = (self.opening_ml[d] + self.received_bottles[d] * self.item.bottle_ml) / self.item.bottle_ml
            n = int(self.ordered_bottles[m])
            rows.append(
                {
                    "agent": self.item.agent,
                    "month_ordered": int(m),
                    "month_delivered": int(d),
                    "bottles": n,
                    "cost": n * self.item.price_per_bottle,
                    "stock_after_bottles": after,
                }
            )
        return rows


def _simulate(item: StockItem, use_ml, level_ml):
    """Run the (R, S) policy month by month for use draws (D, M); FIFO expiry.

    Each draw places its own orders at the review months (the policy reacts to the stock it
    has), raising its inventory position to ``level_ml`` in whole cases.
    """
    use = np.atleast_2d(np.asarray(use_ml, dtype=float))
    n_draws, n_months = use.shape
    delay = math.ceil(item.lead_months - 1e-9)
    # lots[:, k]: unopened bottles delivered at month k (index 0 also holds the opening stock)
    lots = np.zeros((n_draws, n_months + 1))
    lots[:, 0] = item.opening_bottles
    born = np.arange(n_months + 1, dtype=float)
    open_ml = np.full(n_draws, float(item.opening_open_ml))
    ordered = np.zeros((n_draws, n_months + delay + 1))
    out = {
        k: np.zeros((n_draws, n_months))
        for k in ("opening", "received", "used", "short", "expired", "closing", "ordered", "on_order")
    }
    for m in range(n_months):
        out["opening"][:, m] = open_ml + lots.sum(axis=1) * item.bottle_ml
        got = ordered[:, m - delay] if m - delay >= 0 else np.zeros(n_draws)
        lots[:, m] += got
        out["received"][:, m] = got
        if m % int(item.review_months) == 0:
            pending = ordered[:, max(0, m - delay + 1) : m].sum(axis=1) if delay > 0 else 0.0
            position = open_ml + lots.sum(axis=1) * item.bottle_ml + pending * item.bottle_ml
            gap = np.maximum(level_ml[m] - position, 0.0)
            cases = np.ceil(gap / item.bottle_ml / item.order_multiple - 1e-9)
            ordered[:, m] = cases * item.order_multiple
            if delay == 0:  # delivered at once
                lots[:, m] += ordered[:, m]
                out["received"][:, m] += ordered[:, m]
        out["ordered"][:, m] = ordered[:, m]
        out["on_order"][:, m] = ordered[:, max(0, m - delay + 1) : m + 1].sum(axis=1) if delay > 0 else 0.0
        need = use[:, m]
        from_open = np.minimum(open_ml, need)
        open_ml = open_ml - from_open
        rest = need - from_open
        # open whole bottles, oldest first
        want = np.ceil(rest / item.bottle_ml - 1e-9)
        for k in range(m + 1):
            take = np.minimum(lots[:, k], want)
            lots[:, k] -= take
            want -= take
            open_ml = open_ml + take * item.bottle_ml
        from_new = np.minimum(open_ml, rest)
        open_ml = open_ml - from_new
        out["used"][:, m] = from_open + from_new
        out["short"][:, m] = rest - from_new
        gone = (born[: m + 1] + item.shelf_life_months) <= m + 1 + 1e-9
        out["expired"][:, m] = lots[:, : m + 1][:, gone].sum(axis=1)
        lots[:, : m + 1][:, gone] = 0
        out["closing"][:, m] = open_ml + lots.sum(axis=1) * item.bottle_ml
    return out


def plan_stock(item: StockItem, mean_ml, sigma_ml, draws_ml=None, seed: int = 0, n_draws: int = 500) -> StockPlan:
    """Orders of an (R, S) policy and the stock they give, month by month.

    Parameters
    ----------
    item : StockItem
        Stock, lead time, review period, service level, packs, shelf life.
    mean_ml, sigma_ml : array_like
        Forecast use of each month (P50) and its standard deviation, shape (M,). [mL]
    draws_ml : array_like, optional
        Use draws (D, M) for the chance of a stock-out; normal draws from mean and sigma
        (cut at 0, seeded) when not given. [mL]
    seed, n_draws : int
        Seed and number of the normal draws.

    Returns
    -------
    StockPlan

    Notes
    -----
    At each review month t the order-up-to level is the forecast over the L + R months
    from t (L rounded up to whole months: a delivery arrives at the start of a month) plus
    z x sqrt(sum of sigma^2 over the same months), which is z x sigma x sqrt(L + R) when
    sigma is the same each month [1]_. The order raises the inventory position (on hand
    after this month's delivery, plus on order) to S, rounded up to whole cases. The orders
    shown are those at P50 use; the chance of a stock-out in a month is the share of use
    draws, each running the same policy on its own use, with a shortfall in that month.
    Part-used bottles are carried as mL; a bottle is opened only when the open liquid
    runs out; unopened bottles expire first in, first out. Beyond the last month the
    forecast repeats its last month. When use draws are given, sigma over L + R is the
    standard deviation of the draws' sums over those months (the months of one draw of a
    year move together, so their spread adds up faster than sqrt(L + R)).

    References
    ----------
    .. [1] Silver, Pyke and Thomas 2017, (R, S) system (from memory).
    """
    check_item(item)
    mean = np.asarray(mean_ml, dtype=float)
    sigma = np.asarray(sigma_ml, dtype=float)
    n_months = mean.size
    delay = math.ceil(item.lead_months - 1e-9)
    cover = delay + int(item.review_months)
    ext_mean = np.concatenate([mean, np.full(cover, mean[-1])])
    ext_var = np.concatenate([sigma, np.full(cover, sigma[-1])]) ** 2
    z = float(service_z(item.service_level))
    win_mean = np.array([ext_mean[t : t + cover].sum() for t in range(n_months)])
    if draws_ml is not None:
        # the spread of use over L + R from the draws' own sums: months of one draw move together
        d = np.asarray(draws_ml, dtype=float)
        ext_d = np.concatenate([d, np.repeat(d[:, -1:], cover, axis=1)], axis=1)
        sums = np.stack([ext_d[:, t : t + cover].sum(axis=1) for t in range(n_months)], axis=1)
        safety = z * (sums.std(axis=0, ddof=1) if d.shape[0] > 1 else np.zeros(n_months))
    else:
        safety = z * np.sqrt(np.array([ext_var[t : t + cover].sum() for t in range(n_months)]))
    level = win_mean + safety
    p50 = _simulate(item, mean[None, :], level)
    if draws_ml is None:
        rng = np.random.default_rng(seed)
        draws = np.maximum(rng.normal(mean, sigma, size=(n_draws, n_months)), 0.0)
    else:
        draws = np.asarray(draws_ml, dtype=float)
    drawn = _simulate(item, draws, level)
    received = p50["received"][0]
    return StockPlan(
        item=item,
        order_up_to_ml=level,
        safety_ml=safety,
        ordered_bottles=p50["ordered"][0].astype(int),
        received_bottles=received,
        opening_ml=p50["opening"][0],
        used_ml=p50["used"][0],
        short_ml=p50["short"][0],
        expired_bottles=p50["expired"][0],
        closing_ml=p50["closing"][0],
        on_order_bottles=p50["on_order"][0],
        stockout_chance=(drawn["short"] > 1e-9).mean(axis=0),
        cash=received * item.price_per_bottle,
    )
