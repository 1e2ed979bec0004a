"""The trends of a set of records: each measure's chart, its signals in words, and the programme's effect."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from model.base.errors import InputError
from model.base.jsonable import to_json_value
from model.trends.its import InterruptedSeries, interrupted_series
from model.trends.measures import MEASURES, monthly_measures
from model.trends.spc import anhoj_signals, p_limits, rule_signals, signal_sentences, xmr_limits

#: Measures of the charts by default, with their plain labels.
CHART_MEASURES = {
    "co2e_kg_per_case": "kg CO2e per case",
    "co2e_t": "t CO2e a month",
    "co2e_kg_per_hour": "kg CO2e per anaesthetic hour",
    "time_weighted_fgf_l_min": "time-weighted fresh gas flow (L/min)",
    "share_at_or_under_1_l_min": "share of minutes at or under 1 L/min",
    "share_at_or_under_0_5_l_min": "share of minutes at or under 0.5 L/min",
    "nitrous_oxide_l_per_case": "N2O litres per case",
    "high_flow_case_share": "share of cases with a long high-flow run",
}
#: p-chart denominators of the shares of cases. Shares of minutes go on individuals charts:
#: the minutes of one case are not independent trials, so binomial limits on minutes would
#: be far too narrow (overdispersion; docs/trends.md).
_SHARE_PARTS = {"high_flow_case_share": "cases"}
#: Fewest months for the control limits to be shown as such (Provost & Murray 2011 advise
#: 20 or more for firm limits, and call limits on 12 to 20 trial limits; from memory).
MIN_MONTHS_LIMITS = 12


@dataclass
class Trends:
    """The trends of one grouping: charts (long form), signals in words, run-chart checks, ITS."""

    level: str
    change_month: str | None
    measures: pd.DataFrame
    charts: pd.DataFrame
    signals: list[str]
    run_checks: dict
    effects: dict[tuple[str, str], InterruptedSeries] = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)

    def effect_sentences(self) -> list[str]:
        """The interrupted time series of each measure in words."""
        out = []
        for (group, m), r in self.effects.items():
            unit = MEASURES[m][0]
            label = CHART_MEASURES[m] + ("" if group == "department" else f", {group}")
            out.extend(r.sentences(label, unit))
        return out

    def to_dict(self) -> dict:
        """Machine-readable form (stable keys, units in the measure names)."""
        return to_json_value(
            {
                "level": self.level,
                "change_month": self.change_month,
                "measures": self.measures.to_dict("records"),
                "charts": self.charts.to_dict("records"),
                "signals": self.signals,
                "run_chart_checks": [{"group": g, "measure": m, **v} for (g, m), v in self.run_checks.items()],
                "programme_effect": [
                    {
                        "group": g,
                        "measure": m,
                        "level_change": r.level_change,
                        "level_ci": list(r.level_ci),
                        "slope_change_per_month": r.slope_change,
                        "slope_ci": list(r.slope_ci),
                        "saved_against_counterfactual": r.saved,
                        "saved_ci": list(r.saved_ci),
                        "hac_lags": r.lags,
                        "confidence": r.confidence,
                        "months_before": r.n_before,
                        "months_after": r.n_after,
                    }
                    for (g, m), r in self.effects.items()
                ],
                "notes": self.notes,
            }
        )


def _month_index(months: list[str], change_month: str | None, where: str) -> int | None:
    if change_month is None:
        return None
    text = str(change_month).strip()
    try:
        pd.Period(text, freq="M")
    except (ValueError, TypeError):
        raise InputError(where, text, "a month written YYYY-MM, e.g. 2026-01") from None
    if len(text) != 7:
        raise InputError(where, text, "a month written YYYY-MM, e.g. 2026-01")
    if text not in months or text == months[0]:
        raise InputError(where, text, f"a month after the first of the records' months, {months[0]} to {months[-1]}")
    return months.index(text)


def build_trends(
    cases: pd.DataFrame,
    change_month: str | None = None,
    level: str = "department",
    sites: dict[str, str] | None = None,
    measures=tuple(CHART_MEASURES),
    where: str = "change date",
) -> Trends:
    """Charts, signals and the programme's effect for each measure and group.

    Parameters
    ----------
    cases : DataFrame
        The audit's case table.
    change_month : str or None
        First programme month, "YYYY-MM": limits are worked out before and from it and the
        interrupted time series is fitted around it.
    level : {"department", "site", "theatre"}
    sites : dict or None
        Theatre -> site.
    measures : sequence of str
        Keys of ``CHART_MEASURES``.
    where : str
        Name of the change-date field, for messages.

    Returns
    -------
    Trends
        ``charts`` in long form: ``group``, ``measure``, ``chart`` ("individuals" or "p"),
        ``month``, ``value``, ``phase``, ``centre``, ``lcl``, ``ucl``, ``sigma`` and one
        boolean column per rule of :data:`model.trends.spc.RULES` plus ``signal`` (any).
    """
    unknown = [m for m in measures if m not in CHART_MEASURES]
    if unknown:
        raise InputError("measure", ", ".join(unknown), "one of " + ", ".join(CHART_MEASURES))
    table = monthly_measures(cases, level, sites)
    if not len(table):
        raise InputError("records", "no case with a month", "records with dated cases")
    all_months = sorted(table["month"].unique())
    _month_index(all_months, change_month, where)
    parts, words, runs, effects, notes = [], [], {}, {}, []
    full = pd.period_range(all_months[0], all_months[-1], freq="M").astype(str).tolist()
    if len(full) != len(all_months):
        notes.append("Some months between the first and last have no case; the charts join the months there are.")
    if len(all_months) < MIN_MONTHS_LIMITS:
        notes.append(
            f"Only {len(all_months)} months: the control limits are trial limits; read the run-chart checks "
            "(Anhøj's rules) first."
        )
    for group, g in table.groupby("group", sort=True):
        g = g.sort_values("month").reset_index(drop=True)
        months = g["month"].tolist()
        # The first month of the group from the change on (a theatre may have no case that month).
        after = [i for i, mo in enumerate(months) if change_month is not None and mo >= change_month]
        k = after[0] if after and 0 < after[0] < len(months) else None
        if change_month is not None and k is None:
            notes.append(f"{group}: no month on both sides of {change_month}; one set of limits is shown.")
        whole = len(months) == len(pd.period_range(months[0], months[-1], freq="M"))
        for m in measures:
            if m in _SHARE_PARTS:
                den = g[_SHARE_PARTS[m]].to_numpy(dtype=float)
                chart = p_limits(g[m].to_numpy(dtype=float) * den, den, k)
                kind = "p"
            else:
                chart = xmr_limits(g[m].to_numpy(dtype=float), k)
                kind = "individuals"
            flags = rule_signals(chart)
            label = CHART_MEASURES[m] + ("" if group == "department" else f" ({group})")
            words.extend(signal_sentences(months, flags, label, chart))
            runs[(group, m)] = anhoj_signals(g[m].to_numpy(dtype=float))
            frame = chart.drop(columns=[c for c in ("moving_range", "n") if c in chart.columns])
            frame.insert(0, "month", months)
            frame.insert(0, "chart", kind)
            frame.insert(0, "measure", m)
            frame.insert(0, "group", group)
            frame = pd.concat([frame, flags], axis=1)
            frame["signal"] = flags.to_numpy().any(axis=1)
            parts.append(frame)
            y = g[m].to_numpy(dtype=float)
            if k is not None and k >= 3 and len(y) - k >= 3 and np.isfinite(y).all() and whole:
                effects[(group, m)] = interrupted_series(y, k)
    if change_month is not None and not effects:
        notes.append("The programme's effect needs at least 3 months with a value on each side of the change date.")
    charts = pd.concat(parts, ignore_index=True) if parts else pd.DataFrame()
    return Trends(level, change_month, table, charts, words, runs, effects, notes)
