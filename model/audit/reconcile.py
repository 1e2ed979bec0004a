"""Purchase-based emissions and reconciliation of purchases with recorded (or modelled) use."""

from __future__ import annotations

from dataclasses import dataclass

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


def _months_text(months) -> str:
    """Months listed ("2026-01, 2026-02"), or their span ("between 2026-01 and 2026-12") when many."""
    months = sorted(months)
    if len(months) > 4:
        return f"between {months[0]} and {months[-1]}"
    return ", ".join(months)


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
        volatile liquid in the months with records; NaN where none was bought),
        ``months_records_not_bought`` (months with records and no purchases), ``partial``
        (records and purchases cover only part of each other: months bought without
        records, months recorded without purchases, or that share under
        :data:`PARTIAL_RECORDS_SHARE`) and ``message`` (plain sentences).
    """
    per_case = cases.groupby("month").agg(cases=("month", "size"), theatres=("theatre", lambda x: int(x.nunique())))
    bought_months = sorted(set(recon.loc[(recon["month"] != "all") & (recon["purchased"] > 0), "month"]))
    months = sorted(set(bought_months) | set(per_case.index))
    by_month = pd.DataFrame({"month": months})
    by_month["cases"] = by_month["month"].map(per_case["cases"]).fillna(0).astype(int)
    by_month["theatres"] = by_month["month"].map(per_case["theatres"]).fillna(0).astype(int)
    by_month["bought"] = by_month["month"].isin(bought_months)
    by_month["has_records"] = by_month["cases"] > 0
    # Over the months that have both purchases and records: months recorded but not bought
    # would count use against nothing bought.
    both = recon[recon["month"].isin(set(bought_months) & set(per_case.index))]
    volatile = both.loc[np.array([reference.agents[i].kind == "volatile" for i in both["item"]], dtype=bool)]
    bought = float(volatile["purchased"].sum())
    share = float(volatile["recorded"].sum()) / bought if bought > 0 else float("nan")
    missing = [m for m in bought_months if m not in set(per_case.index)]
    theatres = sorted(str(t) for t in cases["theatre"].dropna().unique())
    unbought = [m for m in per_case.index if m not in set(bought_months)]
    partial = bool(missing) or bool(unbought) or (share == share and share < PARTIAL_RECORDS_SHARE)
    n_with = sum(1 for m in bought_months if m not in missing)
    message = (
        f"The records hold {len(cases):,} case(s) in {len(theatres)} theatre(s) "
        f"({', '.join(theatres[:8])}{', ...' if len(theatres) > 8 else ''}) over {n_with} of the "
        f"{len(bought_months)} month(s) with purchases"
    )
    if share == share:
        message += f"; in those months they account for {share * 100:.0f} % of the volatile agent bought"
    if unbought:
        message += (
            f". {len(unbought)} of the {len(per_case)} month(s) with records ({_months_text(unbought)}) have "
            "no purchases: give the purchases files of those months too"
        )
    if bool(missing) or (share == share and share < PARTIAL_RECORDS_SHARE):
        message += (
            ". They cover only part of what the purchases serve, so the unexplained amounts "
            "and the N2O gap are not losses: compare only months and theatres the records cover fully."
        )
    elif unbought:
        message += (
            ". The purchases cover only part of the records, so the unexplained amounts and the N2O "
            "gap are not losses: compare only the months both cover."
        )
    else:
        message += "."
    return {
        "by_month": by_month,
        "months_records_not_bought": unbought,
        "months_bought": len(bought_months),
        "months_with_records": n_with,
        "cases": int(len(cases)),
        "theatres": theatres,
        "volatile_recorded_share": share,
        "partial": partial,
        "message": message,
    }


#: The N2O apparent loss where the records and the purchases cover only part of each other.
N2O_LOSS_NOT_ESTIMATED = "not estimated"
#: Why it is not estimated, in the same words on the page and the command line.
N2O_LOSS_WHY_NOT = (
    "the records and the purchases cover only part of each other, so the gap between them is "
    "mostly use or purchases the other does not hold; see the coverage by month and theatre"
)


@dataclass
class PurchaseCheck:
    """Purchases against a record audit: the one reconciliation the page and the command share.

    Attributes
    ----------
    files : list of (str, int)
        Each purchases file as the user named it, with its lines read (used and set aside).
    table : DataFrame or None
        The usable purchase lines of every file together (None without purchases).
    notes : list of str
        One message per purchase line set aside, naming its file, line and column.
    recon : DataFrame or None
        :func:`reconcile` of every file's purchases against the recorded use.
    coverage : dict or None
        :func:`record_coverage`: what the records cover, by month and theatre.
    costs : DataFrame
        :func:`cost_view`.
    """

    files: list
    table: pd.DataFrame | None
    notes: list
    recon: pd.DataFrame | None
    coverage: dict | None
    costs: pd.DataFrame

    def n2o_loss(self) -> tuple[str, str]:
        """The N2O apparent loss as (figure, share) text, the same words on the page and the command line.

        ("not estimated", "") where the records cover only part of what the purchases serve;
        ("", "") where no N2O was bought or recorded.
        """
        if self.recon is None:
            return "", ""
        n2o = self.recon[(self.recon["item"] == "nitrous_oxide") & (self.recon["month"] == "all")]
        if not len(n2o):
            return "", ""
        if self.coverage is not None and self.coverage["partial"]:
            return N2O_LOSS_NOT_ESTIMATED, ""
        r = n2o.iloc[0]
        share = "" if pd.isna(r["unexplained_share"]) else f"{r['unexplained_share'] * 100:.0f} % of purchases"
        return f"{float(r['apparent_loss']):,.0f} L", share

    def n2o_loss_line(self) -> str:
        """The N2O apparent loss in one line, with why when it is not estimated ("" without N2O)."""
        figure, share = self.n2o_loss()
        if not figure:
            return ""
        if figure == N2O_LOSS_NOT_ESTIMATED:
            return f"N2O apparent loss: {N2O_LOSS_NOT_ESTIMATED} ({N2O_LOSS_WHY_NOT})"
        return f"N2O apparent loss: {figure}" + (f" ({share})" if share else "")


def check_purchases(files, result, reference: Reference = DEFAULT_REFERENCE) -> PurchaseCheck:
    """Read every purchases file and reconcile them all together against a record audit.

    Parameters
    ----------
    files : sequence of Source or path
        Purchases files (:func:`model.io.purchases.load_purchases`); their lines are
        reconciled together, each file named in its own messages.
    result : AuditResult
        The record audit (its use by month, its cases and costs).
    reference : Reference

    Raises
    ------
    InputError
        A file that cannot be read at all (missing, wrong format), named as given.
    """
    from model.base.files import Source
    from model.io.purchases import load_purchases

    tables, notes, named = [], [], []
    for f in files:
        src = Source.of(f)
        read = load_purchases(src, reference)
        tables.append(read.table)
        notes += read.messages
        named.append((src.name, int(len(read.table) + len(read.messages))))
    table = pd.concat(tables, ignore_index=True) if tables else None
    recon = coverage = None
    if table is not None:
        recon = reconcile(table, result.use_by_month(), reference, result.gwp_source)
        coverage = record_coverage(result.cases, recon, reference)
    return PurchaseCheck(named, table, notes, recon, coverage, cost_view(table, result, reference))
