"""The figures of a reporting period from the record audit (use-based) and purchases (purchase-based).

Use-based figures come from the audit's case table (:class:`model.audit.result.AuditResult`):
cases are cut by their start, theatres grouped into sites, and CO2e worked out again from
the emitted masses under each GWP source shown (CO2e is linear in mass, so under the
audit's own source the figures equal the audit's). Purchase-based figures come from the
purchases table through :func:`model.audit.reconcile.purchase_emissions`, month by month, and
by site when the purchases name sites (the purchases file's optional ``site`` column).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from model.audit.reconcile import purchase_emissions
from model.audit.result import BAND_COLUMNS, time_weighted_fgf
from model.base.errors import InputError
from model.freshgas import FLOW_BAND_NAMES
from model.io.purchases import SITE_COLUMN
from model.reference import DEFAULT_REFERENCE, STANDARD_PRESSURE_KPA, Reference
from model.report.lmdi import PeriodMix
from model.report.periods import Period, month_shares

#: GWP sources always shown side by side (frameworks differ in which they ask for).
SIDE_BY_SIDE = ("ar5_gwp100", "ar6_gwp100")
#: Site of a theatre the site file does not name.
UNASSIGNED = "unassigned"
#: Site of a purchase line that names none (a blank ``site``).
NO_SITE = "no site"
#: What each kind of row of :func:`sites_against_purchases` is (its ``note``).
SITE_NOTES = {
    "known": "",
    "unassigned": "theatres the site file does not name",
    "purchases only": "named in purchases only: not a site of the site file or the records",
    "no site": "purchases with no site",
}
#: Columns of the audit's case table the report reads.
NEEDED = (
    "case_id",
    "agent",
    "theatre",
    "start",
    "month",
    "minutes",
    "oxygen_l",
    "air_l",
    "nitrous_oxide_l",
    "agent_mass_g",
    "agent_emitted_g",
    "nitrous_oxide_g",
    "nitrous_oxide_emitted_g",
    "cost_total",
    *BAND_COLUMNS,
)


def gwp_sources_shown(gwp_source: str, reference: Reference = DEFAULT_REFERENCE) -> tuple[str, ...]:
    """The chosen source first, then AR5 and AR6 GWP100 (each once)."""
    reference.gwp_source(gwp_source)
    return tuple(dict.fromkeys((gwp_source, *SIDE_BY_SIDE)))


def assign_sites(theatres, sites: dict[str, str] | None, where: str = "site file") -> np.ndarray:
    """The site of each theatre (vectorised), from a theatre -> site mapping.

    Parameters
    ----------
    theatres : array_like of str
        The records' theatres.
    sites : dict or None
        From :func:`model.io.sites.read_sites`. None: every theatre is its own site.
    where : str
        Name of the site file, for the message.

    Returns
    -------
    ndarray of str
        Theatres matched ignoring case and surrounding spaces; a theatre the file does not
        name goes to ``UNASSIGNED``.

    Raises
    ------
    InputError
        When the file names theatres that are not in the records (usually a misspelling),
        naming them and the theatres the records hold.
    """
    th = pd.Series(theatres, dtype=object).fillna("unknown").astype(str)
    if sites is None:
        return th.to_numpy(dtype=object)
    known = {t.strip().casefold(): t for t in pd.unique(th)}
    unknown = [t for t in sites if t.strip().casefold() not in known]
    if unknown:
        raise InputError(
            f"{where}: theatre",
            ", ".join(unknown),
            "not in the records; the records' theatres are " + ", ".join(sorted(known.values())),
        )
    by_key = {t.strip().casefold(): s for t, s in sites.items()}
    return th.map(lambda t: by_key.get(t.strip().casefold(), UNASSIGNED)).to_numpy(dtype=object)


def cases_in(
    cases: pd.DataFrame,
    period: Period,
    sites: dict[str, str] | None = None,
    chosen_sites=None,
    where: str = "period",
    site_field: str = "site",
) -> pd.DataFrame:
    """The audit's cases that start inside ``period``, with a ``site`` column, restricted to ``chosen_sites``.

    Raises
    ------
    InputError
        When no case starts in the period, naming the period and the dates the records cover.
    """
    missing = [c for c in NEEDED if c not in cases.columns]
    if missing:
        raise InputError("audit result", ", ".join(missing), "columns the report needs are missing")
    c = cases.copy()
    c["site"] = assign_sites(c["theatre"], sites)
    if chosen_sites:
        unknown = sorted(set(chosen_sites) - set(c["site"]))
        if unknown:
            raise InputError(site_field, ", ".join(unknown), "allowed sites are " + ", ".join(sorted(set(c["site"]))))
        c = c[c["site"].isin(list(chosen_sites))]
    inside = c[period.contains(c["start"])]
    if not len(inside):
        starts = pd.to_datetime(cases["start"], errors="coerce").dropna()
        cover = (
            f"the records' cases start from {starts.min():%Y-%m-%d} to {starts.max():%Y-%m-%d}"
            if len(starts)
            else "no case in the records has a start date"
        )
        raise InputError(where, period.text, f"no case starts in {period.label}; {cover}")
    return inside.reset_index(drop=True)


def _gwp(reference: Reference, item: str, source: str, used: bool) -> float:
    return float(reference.gwp(item, source, used=used))


def use_figures(cases: pd.DataFrame, reference: Reference, gwp_sources) -> dict:
    """Use-based totals of a set of cases (one period, chosen sites).

    Parameters
    ----------
    cases : DataFrame
        Rows of the audit's case table (e.g. from :func:`cases_in`).
    reference : Reference
    gwp_sources : sequence of str
        Sources to work CO2e out under (the first is the chosen one).

    Returns
    -------
    dict
        ``cases`` (distinct case ids), ``hours`` [h], ``co2e_t`` {source: t CO2e},
        ``co2e_agent_t``, ``co2e_n2o_t`` {source: t}, ``kg_per_case``, ``kg_per_hour``
        (chosen source) [kg CO2e], ``n2o_l_per_case`` [L], ``n2o_kg_co2e_per_case``,
        ``fgf_l_min`` (time-weighted fresh gas flow, the audit's
        :func:`model.audit.result.time_weighted_fgf` of the summed cases) [L/min],
        ``band_share`` {band: share of counted minutes}, ``cost``, ``absorbent_kg`` (None
        when the audit gives none), ``agent_kg`` / ``agent_hours`` by agent, ``n2o_kg``.
    """
    n_cases = int(cases["case_id"].nunique())
    minutes = float(cases["minutes"].sum())
    hours = minutes / 60.0
    volatile = cases[cases["agent"] != "none"]
    agent_kg = (volatile.groupby("agent")["agent_emitted_g"].sum() / 1000.0).to_dict()
    agent_hours = (volatile.groupby("agent")["minutes"].sum() / 60.0).to_dict()
    n2o_kg = float(cases["nitrous_oxide_emitted_g"].sum()) / 1000.0
    co2e_agent, co2e_n2o = {}, {}
    for s in gwp_sources:
        co2e_agent[s] = sum(kg * _gwp(reference, a, s, kg > 0) for a, kg in agent_kg.items()) / 1000.0
        co2e_n2o[s] = n2o_kg * _gwp(reference, "nitrous_oxide", s, n2o_kg > 0) / 1000.0
    co2e = {s: co2e_agent[s] + co2e_n2o[s] for s in gwp_sources}
    chosen = gwp_sources[0]
    band_min = {name: float(cases[col].sum()) for name, col in zip(FLOW_BAND_NAMES, BAND_COLUMNS, strict=True)}
    band_total = sum(band_min.values())
    sums = cases[["oxygen_l", "air_l", "nitrous_oxide_l", "minutes"]].sum().to_frame().T
    absorbent = float(cases["absorbent_g"].sum()) / 1000.0 if "absorbent_g" in cases.columns else None

    def per(x, n):
        return x / n if n > 0 else float("nan")

    return {
        "cases": n_cases,
        "hours": hours,
        "co2e_t": co2e,
        "co2e_agent_t": co2e_agent,
        "co2e_n2o_t": co2e_n2o,
        "kg_per_case": per(co2e[chosen] * 1000.0, n_cases),
        "kg_per_hour": per(co2e[chosen] * 1000.0, hours),
        "n2o_l_per_case": per(float(cases["nitrous_oxide_l"].sum()), n_cases),
        "n2o_kg_co2e_per_case": per(co2e_n2o[chosen] * 1000.0, n_cases),
        "fgf_l_min": float(time_weighted_fgf(sums)[0]),
        "band_share": {b: per(m, band_total) for b, m in band_min.items()},
        "cost": float(cases["cost_total"].sum())
        + (float(cases["cost_absorbent"].sum()) if "cost_absorbent" in cases.columns else 0.0),
        "absorbent_kg": absorbent,
        "agent_kg": agent_kg,
        "agent_hours": agent_hours,
        "n2o_kg": n2o_kg,
    }


def by_agent_table(cases: pd.DataFrame, reference: Reference, gwp_sources) -> pd.DataFrame:
    """Use-based emissions by agent and for N2O: one row each, CO2e under every source side by side.

    Returns
    -------
    DataFrame
        ``item``, ``cases``, ``hours`` [h], ``emitted_kg`` [kg], one ``t CO2e (<label>)``
        column per source and ``co2e_share`` (of the chosen source's total).
    """
    rows = []
    volatile = cases[cases["agent"] != "none"]
    for agent, g in volatile.groupby("agent", sort=True):
        kg = float(g["agent_emitted_g"].sum()) / 1000.0
        rows.append(
            {
                "item": agent,
                "cases": int(g["case_id"].nunique()),
                "hours": float(g["minutes"].sum()) / 60.0,
                "emitted_kg": kg,
                **{s: kg * _gwp(reference, agent, s, kg > 0) / 1000.0 for s in gwp_sources},
            }
        )
    n2o = cases[cases["nitrous_oxide_l"] > 0]
    kg = float(cases["nitrous_oxide_emitted_g"].sum()) / 1000.0
    rows.append(
        {
            "item": "nitrous_oxide",
            "cases": int(n2o["case_id"].nunique()),
            "hours": float(n2o["minutes"].sum()) / 60.0,
            "emitted_kg": kg,
            **{s: kg * _gwp(reference, "nitrous_oxide", s, kg > 0) / 1000.0 for s in gwp_sources},
        }
    )
    df = pd.DataFrame(rows)
    total = df[gwp_sources[0]].sum()
    df["co2e_share"] = df[gwp_sources[0]] / total if total > 0 else 0.0
    return df.rename(columns={s: f"t CO2e ({reference.gwp_source(s).label})" for s in gwp_sources})


def grouped_table(cases: pd.DataFrame, key: str, reference: Reference, gwp_source: str) -> pd.DataFrame:
    """Use-based figures by ``month`` or ``site``: cases, hours, t CO2e (agent, N2O, total), per case, per hour."""
    rows = []
    for k, g in cases.groupby(key, sort=True):
        f = use_figures(g, reference, (gwp_source,))
        rows.append(
            {
                key: k,
                "cases": f["cases"],
                "hours": f["hours"],
                "t_co2e_agent": f["co2e_agent_t"][gwp_source],
                "t_co2e_n2o": f["co2e_n2o_t"][gwp_source],
                "t_co2e": f["co2e_t"][gwp_source],
                "kg_co2e_per_case": f["kg_per_case"],
                "kg_co2e_per_hour": f["kg_per_hour"],
                "fgf_l_min": f["fgf_l_min"],
            }
        )
    return pd.DataFrame(rows)


def period_mix(figures: dict, reference: Reference, gwp_source: str) -> PeriodMix:
    """The decomposition's view of a period's use-based figures (see :mod:`model.report.lmdi`)."""
    agents = sorted(set(figures["agent_kg"]) | set(figures["agent_hours"]))
    return PeriodMix(
        hours=figures["hours"],
        agent_hours={a: figures["agent_hours"].get(a, 0.0) for a in agents},
        agent_kg={a: figures["agent_kg"].get(a, 0.0) for a in agents},
        agent_gwp={a: _gwp(reference, a, gwp_source, figures["agent_kg"].get(a, 0.0) > 0) for a in agents},
        n2o_kg=figures["n2o_kg"],
        n2o_gwp=_gwp(reference, "nitrous_oxide", gwp_source, figures["n2o_kg"] > 0),
        gwp_label=reference.gwp_source(gwp_source).label,
    )


@dataclass
class PurchaseFigures:
    """Purchase-based figures of a period.

    Attributes
    ----------
    by_item : DataFrame
        ``item``, ``purchased``, ``unit`` (mL liquid or L gas), ``mass_kg`` and one
        ``t CO2e (<label>)`` column per source.
    by_month : DataFrame
        ``month``, ``share`` (of the month inside the period), ``t_co2e`` (chosen source).
    months_missing : list of str
        Months of the period with no purchase line at all.
    by_site : DataFrame or None
        When the purchases name sites: ``site`` (``NO_SITE`` for lines naming none) and one
        ``t CO2e (<label>)`` column per source; its rows add up to ``by_item``'s. None when
        no purchase line names a site.
    """

    by_item: pd.DataFrame
    by_month: pd.DataFrame
    months_missing: list = field(default_factory=list)
    by_site: pd.DataFrame | None = None

    def co2e_t(self, label: str) -> float:
        """Purchase-based CO2e of the period under the column ``label`` [t CO2e]."""
        return float(self.by_item[label].sum()) if len(self.by_item) else 0.0


def _site_text(values) -> pd.Series:
    """Site names as text, a missing or blank one as ""."""
    return pd.Series(values, dtype=object).fillna("").astype(str).str.strip()


def purchases_name_sites(purchases: pd.DataFrame | None) -> bool:
    """Whether any purchase line names a site (a non-blank ``site``)."""
    return (
        purchases is not None
        and SITE_COLUMN in purchases.columns
        and bool((_site_text(purchases[SITE_COLUMN]) != "").any())
    )


def match_purchase_sites(names, known) -> np.ndarray:
    """The report's site of each purchase line (vectorised).

    Parameters
    ----------
    names : array_like of str
        The purchases' ``site`` column (blank or missing: no site).
    known : iterable of str
        The report's sites (:func:`assign_sites` of the records' theatres).

    Returns
    -------
    ndarray of str
        A name matching a known site ignoring case and surrounding spaces is given that
        site's spelling; a blank one is ``NO_SITE``; any other keeps the first spelling the
        purchases give it (so "East Wing" and "east wing" are one site).
    """
    text = _site_text(names)
    spelling = {k.strip().casefold(): k for k in known}
    for name in pd.unique(text):
        spelling.setdefault(name.casefold(), name)
    spelling[""] = NO_SITE
    return text.str.casefold().map(spelling).to_numpy(dtype=object)


def purchase_figures(
    purchases: pd.DataFrame,
    period: Period,
    reference: Reference,
    gwp_sources,
    temperature_c: float = 20.0,
    pressure_kpa: float = STANDARD_PRESSURE_KPA,
    by_site: bool | None = None,
) -> PurchaseFigures:
    """Purchase-based emissions of a period: everything bought in its months counted as emitted.

    Parameters
    ----------
    purchases : DataFrame
        The ``table`` of :func:`model.io.purchases.load_purchases` (several files concatenated).
    period : Period
        Months wholly inside count fully; a month partly inside (a date range) counts by its
        share of days (:func:`model.report.periods.month_shares`).
    by_site : bool, optional
        Give :attr:`PurchaseFigures.by_site`; default: when the purchases name a site
        (:func:`purchases_name_sites`). A line without a site is counted under ``NO_SITE``.

    Returns
    -------
    PurchaseFigures
    """
    shares = month_shares(period)
    labels = {s: f"t CO2e ({reference.gwp_source(s).label})" for s in gwp_sources}
    if by_site is None:
        by_site = purchases_name_sites(purchases)
    keys = (SITE_COLUMN,) if by_site else ()
    if by_site:
        site = (
            _site_text(purchases[SITE_COLUMN])
            if SITE_COLUMN in purchases.columns
            else pd.Series("", index=purchases.index, dtype=object)
        )
        purchases = purchases.assign(**{SITE_COLUMN: site.where(site != "", NO_SITE).to_numpy(dtype=object)})
    frames = []
    for s in gwp_sources:
        pe = (
            purchase_emissions(purchases, reference, s, temperature_c, pressure_kpa, keys)
            if len(purchases)
            else pd.DataFrame(columns=["month", "item", "purchased", "unit", "mass_kg", "co2e_kg", *keys])
        )
        pe = pe[pe["month"].isin(list(shares))].copy()
        pe["share"] = pe["month"].map(shares).astype(float)
        pe[labels[s]] = pe["co2e_kg"] * pe["share"] / 1000.0
        frames.append(pe)
    base = frames[0]
    for col in ("purchased", "mass_kg"):
        base[col] = base[col] * base["share"]
    for s, f in zip(gwp_sources[1:], frames[1:], strict=True):
        base[labels[s]] = f[labels[s]].to_numpy()
    by_item = base.groupby(["item", "unit"], as_index=False)[["purchased", "mass_kg", *labels.values()]].sum()
    by_item = by_item[["item", "purchased", "unit", "mass_kg", *labels.values()]]
    by_month = base.groupby("month", as_index=False).agg(
        share=("share", "first"), t_co2e=(labels[gwp_sources[0]], "sum")
    )
    missing = [m for m in shares if m not in set(base["month"])]
    sites = None
    if by_site:
        sites = base.groupby(SITE_COLUMN, as_index=False)[list(labels.values())].sum()
        sites = sites[[SITE_COLUMN, *labels.values()]].astype({c: float for c in labels.values()})
    return PurchaseFigures(by_item.reset_index(drop=True), by_month, missing, sites)


def sites_against_purchases(
    use_by_site: pd.DataFrame, bought: PurchaseFigures, reference: Reference, gwp_source: str, known=()
) -> pd.DataFrame:
    """Use-based and purchase-based CO2e side by side, one row per site, with the gap.

    Parameters
    ----------
    use_by_site : DataFrame
        :func:`grouped_table` by ``site`` (its ``t_co2e`` under ``gwp_source``).
    bought : PurchaseFigures
        With ``by_site`` (its sites matched to the report's by :func:`match_purchase_sites`).
    known : iterable of str
        The report's sites (from the site file and the records' theatres).

    Returns
    -------
    DataFrame
        ``site``, ``note`` (``SITE_NOTES``: "" for a site of the report; theatres the site
        file does not name; a site named in purchases only; purchases with no site),
        ``use_based_t_co2e``, ``purchase_based_t_co2e``, ``gap_t_co2e`` (purchase-based -
        use-based) and ``gap_share`` (of purchase-based; empty where nothing was bought), in
        t CO2e under ``gwp_source``. Sites of the report first (by name), then
        ``UNASSIGNED``, the sites named in purchases only and ``NO_SITE``. Each column adds
        up to the period's whole-set figure.
    """
    label = f"t CO2e ({reference.gwp_source(gwp_source).label})"
    use = dict(zip(use_by_site["site"], use_by_site["t_co2e"].astype(float), strict=True)) if len(use_by_site) else {}
    bs = bought.by_site
    buy = dict(zip(bs[SITE_COLUMN], bs[label].astype(float), strict=True)) if bs is not None and len(bs) else {}
    known = set(known) | set(use)

    def kind(site):
        if site in known:
            return "unassigned" if site == UNASSIGNED else "known"
        return "no site" if site == NO_SITE else "purchases only"

    order = {"known": 0, "unassigned": 1, "purchases only": 2, "no site": 3}
    rows = sorted(set(use) | set(buy), key=lambda s: (order[kind(s)], s.casefold(), s))
    u = np.array([use.get(s, 0.0) for s in rows], dtype=float)
    p = np.array([buy.get(s, 0.0) for s in rows], dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        share = np.where(p > 0, (p - u) / np.where(p > 0, p, 1.0), np.nan)
    return pd.DataFrame(
        {
            "site": pd.Series(rows, dtype=object),
            "note": [SITE_NOTES[kind(s)] for s in rows],
            "use_based_t_co2e": u,
            "purchase_based_t_co2e": p,
            "gap_t_co2e": p - u,
            "gap_share": share,
        }
    )


def use_against_purchases(
    cases: pd.DataFrame, bought: PurchaseFigures, reference: Reference, gwp_source: str
) -> pd.DataFrame:
    """Use-based and purchase-based side by side, per agent and N2O, with the gap.

    Returns
    -------
    DataFrame
        ``item``, ``use_kg`` (delivered, from records), ``purchase_kg``, ``gap_kg``
        (purchase - use), ``gap_share`` (of purchases), ``use_t_co2e``, ``purchase_t_co2e``,
        ``gap_t_co2e`` (chosen source).
    """
    label = f"t CO2e ({reference.gwp_source(gwp_source).label})"
    use = (cases[cases["agent"] != "none"].groupby("agent")["agent_mass_g"].sum() / 1000.0).to_dict()
    use["nitrous_oxide"] = float(cases["nitrous_oxide_g"].sum()) / 1000.0
    b = bought.by_item.set_index("item")
    rows = []
    for item in sorted(set(use) | (set(b.index) - {"oxygen", "air"})):
        u = float(use.get(item, 0.0))
        p = float(b.loc[item, "mass_kg"]) if item in b.index else 0.0
        g = _gwp(reference, item, gwp_source, (u > 0) or (p > 0))
        pt = float(b.loc[item, label]) if item in b.index else 0.0
        rows.append(
            {
                "item": item,
                "use_kg": u,
                "purchase_kg": p,
                "gap_kg": p - u,
                "gap_share": (p - u) / p if p > 0 else float("nan"),
                "use_t_co2e": u * g / 1000.0,
                "purchase_t_co2e": pt,
                "gap_t_co2e": pt - u * g / 1000.0,
            }
        )
    return pd.DataFrame(rows)
