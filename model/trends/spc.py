"""Control charts of monthly measures: individuals (XmR) and p-charts, signal rules, run-chart rules.

Individuals chart: centre the mean, limits mean +/- 2.66 x mean moving range (2.66 = 3 / d2,
d2 = 1.128 for ranges of two; Montgomery DC, Introduction to Statistical Quality Control,
Wiley, section on the individuals chart). p-chart with varying subgroup size: centre
p-bar = sum(x) / sum(n), limits p-bar +/- 3 sqrt(p-bar (1 - p-bar) / n_i) (Montgomery, same
book, the fraction nonconforming chart). Rules for a signal: a point beyond a limit and two
of three beyond 2 sigma on one side (Western Electric, Statistical Quality Control Handbook,
1956); a run of 8 on one side of the centre (Western Electric 1956; Provost LP, Murray SK,
The Health Care Data Guide, Jossey-Bass 2011, the shift rule); a trend of 6 all going up or
all going down (Provost & Murray 2011). Run-chart rules for short series around the median:
Anhøj J, Olesen AV, PLoS One 2014;9(11):e113825. Limits are worked out within each phase
(before and after a change date): a moving range never spans a change.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
from scipy.stats import binom

from model.base.errors import InputError

#: The rules, each with the source it comes from.
RULES = {
    "beyond_limit": ("a point beyond a control limit", "Western Electric Statistical Quality Control Handbook, 1956"),
    "shift_8": (
        "8 or more points in a row on one side of the centre line",
        "Western Electric Handbook 1956; Provost & Murray, The Health Care Data Guide, 2011",
    ),
    "trend_6": (
        "6 or more points in a row all going up or all going down",
        "Provost & Murray, The Health Care Data Guide, 2011",
    ),
    "two_of_three": (
        "2 of 3 points in a row beyond 2 sigma on the same side",
        "Western Electric Statistical Quality Control Handbook, 1956",
    ),
}
#: 3 / d2 for moving ranges of two points (d2 = 1.128; Montgomery, Introduction to SQC).
E2 = 2.66
D2 = 1.128


def phases(n: int, change_index=None) -> np.ndarray:
    """Phase number of each of ``n`` points: 0 before ``change_index``, 1 from it (None: all 0)."""
    p = np.zeros(n, dtype=np.int64)
    if change_index is not None:
        if not 0 < int(change_index) < n:
            allowed = f"a point inside the series of {n} months, not its first"
            raise InputError("change date", str(change_index), allowed)
        p[int(change_index) :] = 1
    return p


def _by_phase(values, phase, fn) -> np.ndarray:
    out = np.full(len(values), np.nan)
    for k in np.unique(phase):
        m = phase == k
        out[m] = fn(values[m], m)
    return out


def xmr_limits(values, change_index=None) -> pd.DataFrame:
    """Individuals (XmR) chart: centre, sigma and limits of each point.

    Parameters
    ----------
    values : array_like
        One value a month (any unit); NaN months are left out of the limits.
    change_index : int or None
        Index of the first point of the second phase; limits are worked out in each.

    Returns
    -------
    DataFrame
        ``value``, ``phase``, ``moving_range`` (|x_i - x_(i-1)|, NaN at each phase start),
        ``centre`` (phase mean), ``sigma`` (mean moving range / 1.128), ``lcl``, ``ucl``
        (centre -/+ 2.66 x mean moving range), in the unit of the values.

    References
    ----------
    Montgomery DC, Introduction to Statistical Quality Control (Wiley): the individuals chart.
    """
    x = np.asarray(values, dtype=float)
    ph = phases(len(x), change_index)
    mr = np.abs(np.diff(x, prepend=np.nan))
    mr[np.r_[True, ph[1:] != ph[:-1]]] = np.nan
    centre = _by_phase(x, ph, lambda v, m: np.nanmean(v) if np.isfinite(v).any() else np.nan)
    mrbar = _by_phase(mr, ph, lambda v, m: np.nanmean(v) if np.isfinite(v).any() else np.nan)
    return pd.DataFrame(
        {
            "value": x,
            "phase": ph,
            "moving_range": mr,
            "centre": centre,
            "sigma": mrbar / D2,
            "lcl": centre - E2 * mrbar,
            "ucl": centre + E2 * mrbar,
        }
    )


def p_limits(events, totals, change_index=None) -> pd.DataFrame:
    """p-chart with varying subgroup size: centre p-bar and limits of each point.

    Parameters
    ----------
    events, totals : array_like
        Count (or minutes) meeting the condition and the subgroup size of each month.
    change_index : int or None
        First point of the second phase.

    Returns
    -------
    DataFrame
        ``value`` (events / totals), ``n``, ``phase``, ``centre`` (p-bar = sum events / sum
        totals in the phase), ``sigma`` (sqrt(p-bar (1 - p-bar) / n_i)), ``lcl``, ``ucl``
        (p-bar -/+ 3 sigma, within 0 and 1). [1]

    References
    ----------
    Montgomery DC, Introduction to Statistical Quality Control (Wiley): the control chart
    for fraction nonconforming with variable sample size.
    """
    e = np.asarray(events, dtype=float)
    n = np.asarray(totals, dtype=float)
    ph = phases(len(e), change_index)
    ok = n > 0
    with np.errstate(invalid="ignore", divide="ignore"):
        p = np.where(ok, e / np.where(ok, n, 1.0), np.nan)
        pbar = np.full(len(e), np.nan)
        for k in np.unique(ph):
            m = ph == k
            tot = n[m & ok].sum()
            pbar[m] = e[m & ok].sum() / tot if tot > 0 else np.nan
        sigma = np.where(ok, np.sqrt(pbar * (1 - pbar) / np.where(ok, n, 1.0)), np.nan)
    return pd.DataFrame(
        {
            "value": p,
            "n": n,
            "phase": ph,
            "centre": pbar,
            "sigma": sigma,
            "lcl": np.clip(pbar - 3 * sigma, 0.0, 1.0),
            "ucl": np.clip(pbar + 3 * sigma, 0.0, 1.0),
        }
    )


def _runs(keys: np.ndarray):
    """Start and length of each run of equal keys."""
    if not len(keys):
        return np.array([], dtype=int), np.array([], dtype=int)
    starts = np.flatnonzero(np.r_[True, keys[1:] != keys[:-1]])
    lengths = np.diff(np.r_[starts, len(keys)])
    return starts, lengths


def rule_signals(chart: pd.DataFrame) -> pd.DataFrame:
    """The points of a chart that are part of each signal (the rules of ``RULES``).

    Parameters
    ----------
    chart : DataFrame
        From :func:`xmr_limits` or :func:`p_limits` (``value``, ``phase``, ``centre``,
        ``sigma``, ``lcl``, ``ucl``).

    Returns
    -------
    DataFrame
        One boolean column per rule, True on each point of a signalling pattern. Runs and
        trends stay inside a phase; a point on the centre line neither counts for a side nor
        breaks the run (Provost & Murray 2011); in a trend, a point equal to the one before
        ends it. NaN points are left out.
    """
    x = chart["value"].to_numpy(dtype=float)
    ph = chart["phase"].to_numpy()
    c = chart["centre"].to_numpy(dtype=float)
    sd = chart["sigma"].to_numpy(dtype=float)
    out = {k: np.zeros(len(x), dtype=bool) for k in RULES}
    fin = np.isfinite(x) & np.isfinite(c)
    out["beyond_limit"] = fin & ((x > chart["ucl"].to_numpy()) | (x < chart["lcl"].to_numpy()))
    for k in np.unique(ph):
        idx = np.flatnonzero((ph == k) & fin)
        if not len(idx):
            continue
        v, cc, s = x[idx], c[idx], sd[idx]
        side = np.sign(v - cc)
        useful = idx[side != 0]
        us = side[side != 0]
        starts, lengths = _runs(us)
        f = np.zeros(len(x), dtype=bool)
        for st, n in zip(starts[lengths >= 8], lengths[lengths >= 8], strict=True):
            f[useful[st : st + n]] = True
        out["shift_8"] |= f
        d = np.sign(np.diff(v))
        starts, lengths = _runs(d)
        keep = (d[starts] != 0) & (lengths >= 5)  # 5 steps in one direction join 6 points
        f = np.zeros(len(x), dtype=bool)
        for st, n in zip(starts[keep], lengths[keep], strict=True):
            f[idx[st : st + n + 1]] = True
        out["trend_6"] |= f
        with np.errstate(invalid="ignore"):
            hi = v > cc + 2 * s
            lo = v < cc - 2 * s
        for beyond in (hi, lo):
            for j in range(len(v) - 2):
                w = beyond[j : j + 3]
                if w.sum() >= 2:
                    out["two_of_three"][idx[j : j + 3][w]] = True
    return pd.DataFrame(out)


def anhoj_limits(n_useful: int) -> tuple[int, int]:
    """Anhøj's run-chart limits for ``n_useful`` points not on the median.

    Returns
    -------
    tuple of int
        Longest run allowed, round(log2(n) + 3), and fewest crossings allowed, the lower 5th
        percentile of a binomial of n - 1 trials at 0.5 (scipy.stats.binom.ppf).

    References
    ----------
    Anhøj J, Olesen AV. Run charts revisited. PLoS One 2014;9(11):e113825.
    """
    n = int(n_useful)
    if n < 2:
        return n + 1, 0
    return int(np.round(np.log2(n) + 3)), int(binom.ppf(0.05, n - 1, 0.5))


def anhoj_signals(values) -> dict:
    """Anhøj's two run-chart rules around the median of a series.

    Parameters
    ----------
    values : array_like
        One value a month; NaN left out.

    Returns
    -------
    dict
        ``median``, ``useful`` (points not on the median), ``longest_run``, ``run_limit``,
        ``crossings``, ``crossings_limit``, ``run_signal`` (longest run > limit),
        ``crossing_signal`` (crossings < limit) and ``signal`` (either).

    References
    ----------
    Anhøj J, Olesen AV. Run charts revisited. PLoS One 2014;9(11):e113825.
    """
    x = np.asarray(values, dtype=float)
    x = x[np.isfinite(x)]
    med = float(np.median(x)) if len(x) else float("nan")
    side = np.sign(x - med)
    side = side[side != 0]
    _, lengths = _runs(side)
    longest = int(lengths.max()) if len(lengths) else 0
    crossings = int(np.count_nonzero(side[1:] != side[:-1]))
    run_limit, cross_limit = anhoj_limits(len(side))
    return {
        "median": med,
        "useful": int(len(side)),
        "longest_run": longest,
        "run_limit": run_limit,
        "crossings": crossings,
        "crossings_limit": cross_limit,
        "run_signal": longest > run_limit,
        "crossing_signal": crossings < cross_limit,
        "signal": longest > run_limit or crossings < cross_limit,
    }


def signal_sentences(months, signals: pd.DataFrame, measure: str, chart: pd.DataFrame | None = None) -> list[str]:
    """Each signal of a chart in words: the rule, its months and its source.

    With the ``chart``, a span of flagged months is cut where the phase or the side of the
    centre line changes, so a run above and a run below read as two signals.
    """
    months = list(months)
    lines = []
    cut = np.zeros(len(months), dtype=np.int64)
    if chart is not None:
        side = np.sign(chart["value"].to_numpy(dtype=float) - chart["centre"].to_numpy(dtype=float))
        key = chart["phase"].to_numpy() * 3 + np.nan_to_num(side).astype(np.int64)
        cut = np.cumsum(np.r_[0, key[1:] != key[:-1]])
    for rule, (text, source) in RULES.items():
        flags = signals[rule].to_numpy(dtype=bool)
        keys = np.where(flags, cut if rule in ("shift_8", "two_of_three") else 0, -1)
        starts, lengths = _runs(keys)
        for s, n in zip(starts, lengths, strict=True):
            if not flags[s]:
                continue
            span = months[s] if n == 1 else f"{months[s]} to {months[s + n - 1]}"
            lines.append(f"{measure}: {text}, {span} ({source}).")
    return lines
