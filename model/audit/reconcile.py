"""Purchase-based emissions and reconciliation of purchases with recorded (or modelled) use."""

from __future__ import annotations

import numpy as np
import pandas as pd

from model.emissions import co2e_kg, gas_mass_g
from model.reference import DEFAULT_GWP, DEFAULT_REFERENCE, STANDARD_PRESSURE_KPA, Reference


def purchase_emissions(
    purchases: pd.DataFrame,
    reference: Reference = DEFAULT_REFERENCE,
    gwp_source: str = DEFAULT_GWP,
    temperature_c: float = 20.0,
    pressure_kpa: float = STANDARD_PRESSURE_KPA,
    keys=(),
) -> pd.DataFrame:
    """Purchase-based use and emissions per month and item.

    Parameters
    ----------
    purchases : DataFrame
        From :func:`read_purchases`, or the ``table`` of :func:`load_purchases`.
    keys : sequence of str
        Further columns to keep apart (e.g. ``("site",)``); each appears in the result after
        the others. A row whose key is missing (NaN) is left out, so give every row a value.

    Returns
    -------
    DataFrame
        ``month``, ``item``, ``purchased`` and ``unit`` (mL liquid or L gas), ``mass_kg``,
        ``co2e_kg`` (all purchased counted as emitted; oxygen and air have none), then
        ``keys``.

    Notes
    -----
    Liquid mass = volume x density; gas mass by the ideal gas law
    (:func:`model.emissions.gas_mass_g`); CO2e = mass x GWP (:func:`model.emissions.co2e_kg`).
    """
    keys = list(keys)
    g = purchases.groupby(["month", "item", "unit", *keys], as_index=False)["amount"].sum()
    g = g.rename(columns={"amount": "purchased"})
    mass = np.zeros(len(g))
    co2e = np.zeros(len(g))
    for i, r in enumerate(g.itertuples(index=False)):
        grams = _mass_g(reference, r.item, r.purchased, temperature_c, pressure_kpa)
        mass[i] = grams / 1000.0
        co2e[i] = _co2e_kg(reference, r.item, grams, gwp_source)
    g["mass_kg"] = mass
    g["co2e_kg"] = co2e
    return g[["month", "item", "purchased", "unit", "mass_kg", "co2e_kg", *keys]]


def _mass_g(reference: Reference, item: str, amount: float, temperature_c: float, pressure_kpa: float) -> float:
    """Mass of ``amount`` of ``item`` [g]: liquid mL x density, or gas L by the ideal gas law."""
    agent = reference.agents[item]
    if agent.kind == "volatile":
        return amount * agent.liquid_density
    return float(gas_mass_g(amount, agent.molar_mass, temperature_c, pressure_kpa))


def _co2e_kg(reference: Reference, item: str, grams: float, gwp_source: str) -> float:
    """CO2e of ``grams`` of ``item`` emitted [kg]; oxygen and air have none."""
    if item != "nitrous_oxide" and reference.agents[item].kind != "volatile":
        return 0.0
    return float(co2e_kg(grams, reference.gwp(item, gwp_source)))


def reconcile(
    purchases: pd.DataFrame,
    use: pd.DataFrame,
    reference: Reference = DEFAULT_REFERENCE,
    gwp_source: str = DEFAULT_GWP,
    temperature_c: float = 20.0,
    pressure_kpa: float = STANDARD_PRESSURE_KPA,
    months_with_records=None,
) -> pd.DataFrame:
    """Purchased against recorded (or modelled) use, per item and month, with a total per item.

    Parameters
    ----------
    purchases : DataFrame
        From :func:`read_purchases`, or the ``table`` of :func:`load_purchases`.
    use : DataFrame
        ``month``, ``item``, ``recorded`` in the same units (mL liquid, L gas), e.g.
        :meth:`model.audit.result.AuditResult.use_by_month`, or modelled use in that form.

    months_with_records : iterable of str, optional
        Months ("YYYY-MM") the records cover; default: the months of ``use``.

    Returns
    -------
    DataFrame
        ``item``, ``month`` ("all" for the total row of each item), ``unit``, ``purchased``,
        ``recorded``, ``unexplained`` (purchased - recorded), ``unexplained_share``
        (of purchased; empty where nothing was bought or the share is not a finite
        number), ``unexplained_co2e_kg`` and, for nitrous oxide, ``apparent_loss`` (the same
        gap, named as such); ``has_records`` (the month has case records; on the total row,
        every month bought in has), and on the total rows ``purchased_with_records``,
        ``recorded_with_records`` and ``unexplained_share_with_records``: the same over the
        months that have records only.

    Notes
    -----
    Months differ by stock held over; the total row of each item is the fairer figure.
    A negative unexplained amount means more was recorded than bought in that period.
    """
    pe = purchase_emissions(purchases, reference, gwp_source, temperature_c, pressure_kpa)
    u = (
        use.groupby(["month", "item"], as_index=False)["recorded"].sum()
        if len(use)
        else pd.DataFrame(columns=["month", "item", "recorded"])
    )
    items = set(pe["item"])
    u = u[u["item"].isin(items)]
    m = (
        pe[["month", "item", "purchased"]]
        .merge(u, on=["month", "item"], how="outer")
        .fillna({"purchased": 0.0, "recorded": 0.0})
    )
    m["unit"] = ["mL" if reference.agents[i].kind == "volatile" else "L" for i in m["item"]]
    tot = m.groupby(["item", "unit"], as_index=False)[["purchased", "recorded"]].sum()
    tot["month"] = "all"
    out = pd.concat([m, tot], ignore_index=True)
    out["unexplained"] = out["purchased"] - out["recorded"]
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        share = (out["unexplained"] / out["purchased"].where(out["purchased"] > 0, 1)).astype(float)
    # A share over a vanishing purchase (1e-320 bottles) overflows: left empty, as where nothing was bought.
    out["unexplained_share"] = np.where((out["purchased"] > 0) & np.isfinite(share), share, np.nan)
    out["unexplained_co2e_kg"] = [
        _co2e_kg(reference, r.item, _mass_g(reference, r.item, r.unexplained, temperature_c, pressure_kpa), gwp_source)
        for r in out.itertuples(index=False)
    ]
    out["apparent_loss"] = np.where(out["item"] == "nitrous_oxide", out["unexplained"], np.nan)
    if months_with_records is None:
        months_with_records = use["month"] if len(use) else ()
    covered = set(months_with_records)
    monthly = out["month"] != "all"
    out["has_records"] = out["month"].isin(covered)
    within = out[monthly & out["has_records"]].groupby("item")[["purchased", "recorded"]].sum()
    every = out[monthly].groupby("item")["has_records"].all()
    total = ~monthly
    out.loc[total, "has_records"] = out.loc[total, "item"].map(every).fillna(False).astype(bool).to_numpy()
    out["purchased_with_records"] = np.where(total, out["item"].map(within["purchased"]).fillna(0.0), np.nan)
    out["recorded_with_records"] = np.where(total, out["item"].map(within["recorded"]).fillna(0.0), np.nan)
    with np.errstate(invalid="ignore", divide="ignore"):
        out["unexplained_share_with_records"] = np.where(
            total & (out["purchased_with_records"] > 0),
            1.0
            - out["recorded_with_records"] / out["purchased_with_records"].where(out["purchased_with_records"] > 0, 1),
            np.nan,
        )
    out["_total"] = out["month"] == "all"
    out = out.sort_values(["item", "_total", "month"]).drop(columns="_total").reset_index(drop=True)
    return out[
        [
            "item",
            "month",
            "unit",
            "purchased",
            "recorded",
            "unexplained",
            "unexplained_share",
            "unexplained_co2e_kg",
            "apparent_loss",
            "has_records",
            "purchased_with_records",
            "recorded_with_records",
            "unexplained_share_with_records",
        ]
    ]


#: Item name of the absorbent estimate in :func:`cost_view` (records carry no absorbent).
ABSORBENT_ITEM = "absorbent (estimate)"
_GAS_COST = {"oxygen": "cost_oxygen", "air": "cost_air", "nitrous_oxide": "cost_nitrous_oxide"}


def cost_view(purchases: pd.DataFrame | None, result, reference: Reference = DEFAULT_REFERENCE) -> pd.DataFrame:
    """What was bought and what the records show used, in money, per item over the whole period.

    Parameters
    ----------
    purchases : DataFrame or None
        From :func:`model.io.purchases.read_purchases` (``item``, ``unit`` mL or L,
        ``amount``); None when no purchases file is given.
    result : AuditResult
        The record audit (its per-case costs).
    reference : Reference
        Prices: bottles (purchased liquid is priced pro rata by the bottle volume, as the
        audit prices recorded liquid), gases per 1000 L, absorbent per kg.

    Returns
    -------
    DataFrame
        ``item``, ``purchased_cost`` (empty where nothing of the item was bought),
        ``recorded_cost``, ``unexplained_cost`` (purchased - recorded) and ``basis``. The
        absorbent row (``ABSORBENT_ITEM``) is the record audit's estimate; it has no
        purchase figure since the purchases file lists agents and gases only.
    """
    prices = reference.prices
    c = result.cases
    recorded = {}
    for agent, cost in c[c["agent"] != "none"].groupby("agent")["cost_agent"].sum().items():
        recorded[agent] = float(cost)
    for gas, col in _GAS_COST.items():
        recorded[gas] = float(c[col].sum())
    bought = {}
    if purchases is not None and len(purchases):
        for item, amount in purchases.groupby("item")["amount"].sum().items():
            agent = reference.agents[item]
            if agent.kind == "volatile":
                bought[item] = float(amount) / agent.bottle_volume * prices.bottle.get(item, 0.0)
            else:
                bought[item] = float(amount) / 1000.0 * prices.gas_per_1000_l(item)
    rows = []
    for item in sorted(set(recorded) | set(bought)):
        if not recorded.get(item) and item not in bought:
            continue
        p = bought.get(item, np.nan)
        rows.append((item, p, recorded.get(item, 0.0), "recorded flows and dial settings"))
    rows.append(
        (
            ABSORBENT_ITEM,
            np.nan,
            float(c["cost_absorbent"].sum()) if "cost_absorbent" in c else 0.0,
            "estimate from the recorded fresh gas flow (assumed patient)",
        )
    )
    out = pd.DataFrame(rows, columns=["item", "purchased_cost", "recorded_cost", "basis"])
    out.insert(3, "unexplained_cost", out["purchased_cost"] - out["recorded_cost"])
    return out


#: Below this share of the volatile agent bought in the months with records, the records are
#: taken to cover only part of what the purchases serve (some theatres or days): bottles are
#: bought for theatre use, and wastage of opened bottles is well under half. Common practice,
#: no source.
PARTIAL_RECORDS_SHARE = 0.5


def record_coverage(cases: pd.DataFrame, recon: pd.DataFrame, reference: Reference = DEFAULT_REFERENCE) -> dict:
    """What part of the purchases the case records can explain: coverage by month and theatre.

    Parameters
    ----------
    cases : DataFrame
        Per-case audit table (``month``, ``theatre``), e.g. ``AuditResult.cases``.
    recon : DataFrame
        From :func:`reconcile`.

    Returns
    -------
    dict
        ``by_month`` (DataFrame: ``month``, ``cases``, ``theatres``, ``bought`` (the month
        has purchases), ``has_records``), ``months_bought``, ``months_with_records``,
        ``cases``, ``theatres`` (names), ``volatile_recorded_share`` (recorded of bought
        volatile liquid in the months with records; NaN where none was bought), ``partial``
        (records cover only part: months bought without records, or that share under
        :data:`PARTIAL_RECORDS_SHARE`) and ``message`` (one plain sentence).
    """
    per_case = cases.groupby("month").agg(cases=("month", "size"), theatres=("theatre", lambda x: int(x.nunique())))
    bought_months = sorted(set(recon.loc[(recon["month"] != "all") & (recon["purchased"] > 0), "month"]))
    months = sorted(set(bought_months) | set(per_case.index))
    by_month = pd.DataFrame({"month": months})
    by_month["cases"] = by_month["month"].map(per_case["cases"]).fillna(0).astype(int)
    by_month["theatres"] = by_month["month"].map(per_case["theatres"]).fillna(0).astype(int)
    by_month["bought"] = by_month["month"].isin(bought_months)
    by_month["has_records"] = by_month["cases"] > 0
    totals = recon[recon["month"] == "all"]
    volatile = totals[[reference.agents[i].kind == "volatile" for i in totals["item"]]]
    bought = float(volatile["purchased_with_records"].sum())
    share = float(volatile["recorded_with_records"].sum()) / bought if bought > 0 else float("nan")
    missing = [m for m in bought_months if m not in set(per_case.index)]
    theatres = sorted(str(t) for t in cases["theatre"].dropna().unique())
    partial = bool(missing) or (share == share and share < PARTIAL_RECORDS_SHARE)
    n_with = sum(1 for m in bought_months if m not in missing)
    message = (
        f"The records hold {len(cases):,} case(s) in {len(theatres)} theatre(s) "
        f"({', '.join(theatres[:8])}{', ...' if len(theatres) > 8 else ''}) over {n_with} of the "
        f"{len(bought_months)} month(s) with purchases"
    )
    if share == share:
        message += f"; in those months they account for {share:.0%} of the volatile agent bought"
    if partial:
        message += (
            ". They cover only part of what the purchases serve, so the unexplained amounts "
            "and the N2O gap are not losses: compare only months and theatres the records cover fully."
        )
    else:
        message += "."
    return {
        "by_month": by_month,
        "months_bought": len(bought_months),
        "months_with_records": n_with,
        "cases": int(len(cases)),
        "theatres": theatres,
        "volatile_recorded_share": share,
        "partial": partial,
        "message": message,
    }
