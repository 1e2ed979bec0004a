"""The result of a record audit (per-case table, totals, set-aside rows) and its aggregates."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from model.base.jsonable import to_json_value
from model.freshgas import FLOW_BAND_NAMES, FLOW_BANDS
from model.io.record_reading import ReadSummary

#: Fresh gas flow above which a sample counts as high flow. [L/min]
#: Source: Baker AB, Anaesth Intensive Care 1994;22:341-2 (high flow is above 2 L/min).
DEFAULT_HIGH_FLOW_L_MIN = FLOW_BANDS[3][1]
#: Longest run of high flow before a case is flagged. [min] Common practice, no source
#: (induction and emergence at high flow rarely last longer than this).
DEFAULT_HIGH_FLOW_LIMIT_MIN = 15.0

ENGINES = ("auto", "files", "memory", "sql")

BAND_COLUMNS = tuple("band_" + n.replace(" ", "_") + "_min" for n in FLOW_BAND_NAMES)

#: Columns of the case table that add up over cases.
ADDITIVE = (
    "cases",
    "samples",
    "minutes",
    "gaps",
    "gap_min",
    "end_tidal_basis_min",
    "oxygen_l",
    "air_l",
    "nitrous_oxide_l",
    "liquid_agent_ml",
    "bottles",
    "agent_mass_g",
    "agent_emitted_g",
    "nitrous_oxide_g",
    "nitrous_oxide_emitted_g",
    "co2e_agent_kg",
    "co2e_nitrous_oxide_kg",
    "co2e_total_kg",
    "cost_agent",
    "cost_oxygen",
    "cost_air",
    "cost_nitrous_oxide",
    "cost_total",
    *BAND_COLUMNS,
    "high_flow_cases",
    "co2_absorbed_l",
    "absorbent_g",
    "cost_absorbent",
)
#: Groupings of :func:`summarise` (None: the whole set); "theatre_month" groups by both.
GROUPINGS = ("theatre", "month", "agent", "theatre_month")


@dataclass
class AuditResult:
    """The audit of a set of records: one row per case, the reading report, and settings."""

    cases: pd.DataFrame
    report: ReadSummary
    currency: str
    gwp_source: str
    gwp_label: str
    settings: dict = field(default_factory=dict)

    def by(self, key: str) -> pd.DataFrame:
        """Sums by ``theatre``, ``month``, ``agent`` or ``theatre_month`` (see :func:`summarise`)."""
        return summarise(self.cases, key)

    @property
    def total(self) -> dict:
        """Sums over the whole set."""
        return summarise(self.cases, None).iloc[0].to_dict()

    def absorbent_note(self) -> str:
        """What the absorbent figures are: an estimate, and the values it assumes."""
        a = self.settings.get("absorbent_estimate")
        if not a:
            return "not estimated"
        return (
            f"an estimate for an assumed patient (records carry none): VCO2 {a['vco2_ml_min']:.0f} mL/min, "
            f"minute ventilation {a['minute_ventilation_l_min']:.1f} L/min, {a['capacity_l_per_kg']:g} L CO2 "
            f"per kg absorbent; CO2 absorbed = VCO2 x (1 - FGF / minute ventilation) while the fresh gas "
            f"flow is below minute ventilation. Set these in the settings file's [absorbent] table."
        )

    def bands_by_theatre(self) -> pd.DataFrame:
        """Minutes in each flow band by theatre, long form (theatre, band, minutes, share)."""
        t = self.by("theatre")[["theatre", *BAND_COLUMNS]]
        long = t.melt(id_vars="theatre", value_vars=list(BAND_COLUMNS), var_name="band", value_name="minutes")
        long["band"] = long["band"].map(dict(zip(BAND_COLUMNS, FLOW_BAND_NAMES, strict=True)))
        totals = long.groupby("theatre")["minutes"].transform("sum")
        long["share"] = np.where(totals > 0, long["minutes"] / totals.where(totals > 0, 1), 0.0)
        return long

    def use_by_month(self) -> pd.DataFrame:
        """Recorded use per month and item, for reconciling with purchases.

        Returns
        -------
        DataFrame
            ``month``, ``item`` (agent or gas name), ``recorded`` and ``unit`` (mL of liquid
            for volatile agents, L of gas at room conditions for gases).
        """
        c = self.cases
        rows = []
        vol = c[c["agent"] != "none"].groupby(["month", "agent"], as_index=False)["liquid_agent_ml"].sum()
        for r in vol.itertuples(index=False):
            rows.append((r.month, r.agent, float(r.liquid_agent_ml), "mL"))
        gases = c.groupby("month", as_index=False)[["nitrous_oxide_l", "oxygen_l", "air_l"]].sum()
        for r in gases.itertuples(index=False):
            rows.append((r.month, "nitrous_oxide", float(r.nitrous_oxide_l), "L"))
            rows.append((r.month, "oxygen", float(r.oxygen_l), "L"))
            rows.append((r.month, "air", float(r.air_l), "L"))
        return pd.DataFrame(rows, columns=["month", "item", "recorded", "unit"])

    def to_dict(self, max_cases: int = 1000) -> dict:
        """Machine-readable form with stable keys (units in the key names)."""

        def table(df):
            return to_json_value(df.to_dict("records"))

        issues = self.report.issues.head(max(len(self.report.issues), 0))
        return {
            "currency": self.currency,
            "gwp_source": self.gwp_source,
            "gwp_source_label": self.gwp_label,
            "settings": dict(self.settings),
            "report": self.report.summary(),
            "messages": [m for m in issues["message"]],
            "gaps": [m for m in self.report.gap_list["message"]],
            "total": to_json_value(self.total),
            "by_theatre": table(self.by("theatre")),
            "by_month": table(self.by("month")),
            "by_agent": table(self.by("agent")),
            "by_theatre_month": table(self.by("theatre_month")),
            "cases_shown": min(len(self.cases), max_cases),
            "cases": table(self.cases.head(max_cases)),
        }


def summarise(cases: pd.DataFrame, by: str | None) -> pd.DataFrame:
    """Sums of the additive case columns, by ``theatre``, ``month``, ``agent`` or overall.

    Parameters
    ----------
    cases : DataFrame
        The case table of an :class:`AuditResult`.
    by : {"theatre", "month", "agent", "theatre_month"} or None
        Grouping; "theatre_month" gives one row per theatre and month (the figures a
        department tracks for low-flow practice); None gives one row for the whole set.

    Returns
    -------
    DataFrame
        One row per group: the additive columns (``ADDITIVE``), plus the means
        ``liquid_agent_ml_per_case``, ``co2e_kg_per_case`` and the time-weighted fresh gas
        flow ``time_weighted_fgf_l_min`` (also as ``mean_fgf_l_min``, its earlier name):
        the group's gas volume over its counted minutes [L/min].
    """
    if by is not None and by not in GROUPINGS:
        raise ValueError(f"by must be one of {GROUPINGS + (None,)}, got {by!r}")
    cols = [c for c in ADDITIVE if c in cases.columns]
    if by is None:
        out = cases[cols].sum().to_frame().T
        out.insert(0, "group", "all records")
    else:
        keys = ["theatre", "month"] if by == "theatre_month" else [by]
        out = cases.groupby(keys, as_index=False, sort=True)[cols].sum()
    with np.errstate(invalid="ignore", divide="ignore"):
        n = out["cases"].where(out["cases"] > 0)
        out["liquid_agent_ml_per_case"] = out["liquid_agent_ml"] / n
        out["co2e_kg_per_case"] = out["co2e_total_kg"] / n
        out["time_weighted_fgf_l_min"] = time_weighted_fgf(out)
        out["mean_fgf_l_min"] = out["time_weighted_fgf_l_min"]
    for c in ("cases", "samples", "gaps", "high_flow_cases"):
        out[c] = out[c].astype(np.int64)
    return out.reset_index(drop=True)


def time_weighted_fgf(table: pd.DataFrame) -> np.ndarray:
    """Time-weighted fresh gas flow of each row of a case table or its sums.

    Parameters
    ----------
    table : DataFrame
        With ``oxygen_l``, ``air_l``, ``nitrous_oxide_l`` [L] and ``minutes`` [min].

    Returns
    -------
    ndarray
        ``(O2 + air + N2O) / minutes`` [L/min], which is ``sum(FGF_i dt_i) / sum(dt_i)`` over
        the counted samples; NaN where no minute is counted.
    """
    m = table["minutes"].to_numpy(dtype=float)
    gas = (table["oxygen_l"] + table["air_l"] + table["nitrous_oxide_l"]).to_numpy(dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(m > 0, gas / np.where(m > 0, m, 1.0), np.nan)
