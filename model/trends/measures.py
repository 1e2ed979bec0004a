"""Monthly measures of practice from the record audit's per-case table.

Every figure is a sum of the audit's additive case columns (``model.audit.result.ADDITIVE``)
over a month (and site or theatre) divided by another such sum, so it equals the audit's
``by("month")`` table and the emissions report's figures for the same cases. Definitions:
docs/trends.md.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from model.audit.result import BAND_COLUMNS
from model.base.errors import InputError
from model.report.figures import assign_sites

#: Groupings of :func:`monthly_measures`.
LEVELS = ("department", "site", "theatre")
#: Flow bands whose upper edge is at or under 1 L/min, and at or under 0.5 L/min
#: (Baker AB, Anaesth Intensive Care 1994;22:341-2; ``model.freshgas.FLOW_BANDS``).
AT_OR_UNDER_1 = ("band_metabolic_min", "band_minimal_min", "band_low_min")
AT_OR_UNDER_0_5 = ("band_metabolic_min", "band_minimal_min")
#: The measures, their units and whether each is a share of minutes or of cases (p-chart).
MEASURES = {
    "co2e_t": ("t CO2e", None),
    "co2e_kg_per_case": ("kg CO2e per case", None),
    "co2e_kg_per_hour": ("kg CO2e per anaesthetic hour", None),
    "time_weighted_fgf_l_min": ("L/min", None),
    "share_at_or_under_1_l_min": ("share of counted minutes", "band_minutes"),
    "share_at_or_under_0_5_l_min": ("share of counted minutes", "band_minutes"),
    "nitrous_oxide_l_per_case": ("L N2O per case", None),
    "high_flow_case_share": ("share of cases", "cases"),
}
_NEEDED = ("case_id", "agent", "theatre", "month", "minutes", "oxygen_l", "air_l", "nitrous_oxide_l", "co2e_total_kg")


def monthly_measures(
    cases: pd.DataFrame, level: str = "department", sites: dict[str, str] | None = None
) -> pd.DataFrame:
    """Monthly measures of a department, each site or each theatre (vectorised over groups).

    Parameters
    ----------
    cases : DataFrame
        The case table of :class:`model.audit.AuditResult` (one row per case and agent).
    level : {"department", "site", "theatre"}
        One series for the department, or one per site or theatre.
    sites : dict or None
        Theatre -> site (:func:`model.io.sites.read_sites`); None: each theatre is its site.

    Returns
    -------
    DataFrame
        One row per group and month (months "YYYY-MM" in order; "unknown" months dropped):
        ``group``, ``month``, ``cases`` (distinct case ids), ``hours`` [h], ``co2e_t``
        [t CO2e], ``co2e_kg_per_case``, ``co2e_kg_per_hour`` [kg CO2e],
        ``time_weighted_fgf_l_min`` [L/min] (total gas over counted minutes), the shares of
        counted minutes in flow bands at or under 1 and 0.5 L/min, ``band_minutes`` [min]
        (their denominator), ``nitrous_oxide_l_per_case`` [L], ``high_flow_case_share`` and
        ``share_<agent>`` (share of counted hours by agent, "none" for no volatile agent).
        NaN where a denominator is zero.
    """
    if level not in LEVELS:
        raise InputError("level", level, "one of " + ", ".join(LEVELS))
    missing = [c for c in _NEEDED if c not in cases.columns]
    if missing:
        raise InputError("audit result", ", ".join(missing), "columns the trends need are missing")
    c = cases[cases["month"].astype(str) != "unknown"].copy()
    if level == "department":
        c["group"] = "department"
    elif level == "site":
        c["group"] = assign_sites(c["theatre"], sites)
    else:
        c["group"] = c["theatre"].astype(str)
    c["month"] = c["month"].astype(str)
    keys = ["group", "month"]
    bands = [b for b in BAND_COLUMNS if b in c.columns]
    cols = ["minutes", "oxygen_l", "air_l", "nitrous_oxide_l", "co2e_total_kg", *bands]
    if "high_flow_cases" in c.columns:
        cols.append("high_flow_cases")
    s = c.groupby(keys, sort=True)[cols].sum()
    n = c.groupby(keys, sort=True)["case_id"].nunique().astype(float)
    minutes = s["minutes"].to_numpy(dtype=float)
    band_total = s[bands].sum(axis=1).to_numpy(dtype=float) if bands else np.zeros(len(s))

    def ratio(num, den):
        num, den = np.asarray(num, dtype=float), np.asarray(den, dtype=float)
        with np.errstate(invalid="ignore", divide="ignore"):
            return np.where(den > 0, num / np.where(den > 0, den, 1.0), np.nan)

    out = pd.DataFrame(index=s.index)
    out["cases"] = n.to_numpy().astype(np.int64)
    out["hours"] = minutes / 60.0
    out["co2e_t"] = s["co2e_total_kg"].to_numpy(dtype=float) / 1000.0
    out["co2e_kg_per_case"] = ratio(s["co2e_total_kg"], n)
    out["co2e_kg_per_hour"] = ratio(s["co2e_total_kg"], minutes / 60.0)
    gas = (s["oxygen_l"] + s["air_l"] + s["nitrous_oxide_l"]).to_numpy(dtype=float)
    out["time_weighted_fgf_l_min"] = ratio(gas, minutes)
    out["band_minutes"] = band_total
    out["share_at_or_under_1_l_min"] = ratio(s[[b for b in AT_OR_UNDER_1 if b in bands]].sum(axis=1), band_total)
    out["share_at_or_under_0_5_l_min"] = ratio(s[[b for b in AT_OR_UNDER_0_5 if b in bands]].sum(axis=1), band_total)
    out["nitrous_oxide_l_per_case"] = ratio(s["nitrous_oxide_l"], n)
    hf = s["high_flow_cases"] if "high_flow_cases" in s.columns else np.full(len(s), np.nan)
    out["high_flow_case_share"] = ratio(hf, n)
    by_agent = c.pivot_table(index=keys, columns="agent", values="minutes", aggfunc="sum", fill_value=0.0)
    by_agent = by_agent.reindex(s.index, fill_value=0.0)
    for a in sorted(by_agent.columns):
        out[f"share_{a}"] = ratio(by_agent[a], minutes)
    return out.reset_index()
