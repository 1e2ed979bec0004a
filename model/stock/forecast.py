"""Forecast of use by month per agent and N2O: from the Department year or from history."""

from __future__ import annotations

import warnings
from dataclasses import dataclass

import numpy as np
import pandas as pd

from ..base.errors import InputError

#: Normal quantile of P95 (and -P5). [-] Standard normal table (from memory).
Z95 = 1.6448536269514722


@dataclass
class Forecast:
    """Use by month of one item (an agent in mL of liquid, N2O in L of gas).

    Attributes
    ----------
    item : str
        Agent key or ``"nitrous_oxide"``.
    unit : str
        ``"mL"`` (liquid agent) or ``"L"`` (gas).
    months : list of str
        Month labels.
    p5, p50, p95 : ndarray
        Forecast range of each month's use. [unit]
    sigma : ndarray
        Standard deviation of each month's use. [unit]
    draws : ndarray or None
        Use draws (D, M) where the source gives them. [unit]
    holdout : dict or None
        Hold-out check: months held out, mean absolute error, mean absolute percentage
        error, and whether the held-out use fell inside the P5-P95 range.
    source : str
        Where the forecast comes from.
    """

    item: str
    unit: str
    months: list
    p5: np.ndarray
    p50: np.ndarray
    p95: np.ndarray
    sigma: np.ndarray
    draws: np.ndarray | None = None
    holdout: dict | None = None
    source: str = ""


def forecast_from_year(result, item: str) -> Forecast:
    """Monthly use of one item from a Department year's draws.

    Parameters
    ----------
    result : model.year.YearResult
        A computed year (its ``month_draws``).
    item : str
        A volatile agent key, or ``"nitrous_oxide"``.

    Returns
    -------
    Forecast
        P5/P50/P95 over the year's draws, sigma their standard deviation. [mL] or [L]
    """
    from ..reference import VOLATILES

    md = result.month_draws
    if item == "nitrous_oxide":
        draws, unit = np.asarray(md["nitrous_oxide_l"]), "L"
    elif item in VOLATILES:
        draws, unit = np.asarray(md["liquid_ml"])[:, :, list(VOLATILES).index(item)], "mL"
    else:
        raise InputError("agent", item, "one of " + ", ".join([*VOLATILES, "nitrous_oxide"]))
    p5, p50, p95 = np.percentile(draws, [5, 50, 95], axis=0)
    return Forecast(
        item=item,
        unit=unit,
        months=list(result.monthly["month"]),
        p5=p5,
        p50=p50,
        p95=p95,
        sigma=draws.std(axis=0, ddof=1) if draws.shape[0] > 1 else np.zeros(draws.shape[1]),
        draws=draws,
        source=f"Department year '{result.scenario.name}' ({draws.shape[0]} draws)",
    )


def monthly_history(table: pd.DataFrame, item: str) -> pd.Series:
    """Monthly totals of one item from a purchases (or records) table with ``month`` and ``amount``.

    Months with no line count as 0; the series runs from the first to the last month.
    """
    rows = table[table["item"] == item]
    if rows.empty:
        raise InputError("agent", item, "an item of the history (" + ", ".join(sorted(table["item"].unique())) + ")")
    s = rows.groupby("month")["amount"].sum()
    idx = pd.period_range(min(s.index), max(s.index), freq="M").astype(str)
    return s.reindex(idx, fill_value=0.0).astype(float)


def _fit(values: np.ndarray, horizon: int):
    """Mean and standard deviation of an exponential-smoothing forecast ``horizon`` months ahead."""
    from statsmodels.tsa.exponential_smoothing.ets import ETSModel

    seasonal = 12 if values.size >= 36 else None
    model = ETSModel(
        pd.Series(values),
        error="add",
        trend=None,
        seasonal="add" if seasonal else None,
        seasonal_periods=seasonal,
    )
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        fit = model.fit(disp=False)
        pred = fit.get_prediction(start=values.size, end=values.size + horizon - 1)
        frame = pred.summary_frame(alpha=0.10)
    mean = frame["mean"].to_numpy()
    lo = frame["pi_lower"].to_numpy()
    hi = frame["pi_upper"].to_numpy()
    sigma = (hi - lo) / (2 * Z95)
    return np.maximum(mean, 0.0), np.maximum(lo, 0.0), np.maximum(hi, 0.0), sigma, bool(seasonal)


def forecast_from_history(history: pd.Series, item: str, horizon: int = 12, holdout_months: int = 3) -> Forecast:
    """Forecast by exponential smoothing of monthly history, with a hold-out check.

    Parameters
    ----------
    history : Series
        Monthly use, index ``YYYY-MM`` labels, oldest first. [mL] or [L]
    item : str
        What the series is of.
    horizon : int
        Months to forecast after the last month of history.
    holdout_months : int
        Months held out at the end to measure the forecast's error.

    Returns
    -------
    Forecast
        Mean as P50, the 90 % prediction interval as P5-P95, sigma its half-width / 1.645.

    Notes
    -----
    statsmodels' ``ETSModel`` (additive error, no trend; additive 12-month seasonality when three
    years of history or more are given) with its prediction intervals [1]_. The hold-out
    check refits on the history without its last ``holdout_months`` months and compares.

    References
    ----------
    .. [1] Hyndman, R. J. and Athanasopoulos, G., *Forecasting: Principles and Practice*,
       3rd ed., OTexts, 2021, chapter 8 (exponential smoothing; from memory).
    """
    values = history.to_numpy(dtype=float)
    if values.size < 6 + holdout_months:
        raise InputError("history", f"{values.size} months", f"at least {6 + holdout_months} months of {item}")
    h_mean, h_lo, h_hi, _, h_seasonal = _fit(values[:-holdout_months], holdout_months)
    actual = values[-holdout_months:]
    mae = float(np.mean(np.abs(h_mean - actual)))
    mape = float(np.mean(np.abs(h_mean - actual) / np.where(actual > 0, actual, np.nan)) * 100.0)
    holdout = {
        "months": list(history.index[-holdout_months:]),
        "actual": actual.tolist(),
        "forecast": h_mean.tolist(),
        "mean_abs_error": mae,
        "mean_abs_pct_error": mape,
        "inside_p5_p95": int(np.sum((actual >= h_lo) & (actual <= h_hi))),
        "seasonal": h_seasonal,
    }
    mean, lo, hi, sigma, seasonal = _fit(values, horizon)
    last = pd.Period(history.index[-1], freq="M")
    months = [str(last + k) for k in range(1, horizon + 1)]
    return Forecast(
        item=item,
        unit="L" if item in ("nitrous_oxide", "oxygen", "air") else "mL",
        months=months,
        p5=lo,
        p50=mean,
        p95=hi,
        sigma=sigma,
        holdout=holdout,
        source=f"history {history.index[0]} to {history.index[-1]}, exponential smoothing"
        + (" with 12-month seasonality" if seasonal else ""),
    )


def change_practice(forecast: Forecast, from_month: int, factor: float) -> Forecast:
    """The forecast with use multiplied by ``factor`` from month index ``from_month`` on.

    Parameters
    ----------
    forecast : Forecast
        Forecast from either source.
    from_month : int
        First month (index into ``forecast.months``) of the new practice.
    factor : float
        Use under the new practice / use under the old (0 stops the item, 0.4 a move to low
        flow that saves 60 %). [-]

    Returns
    -------
    Forecast
        P5/P50/P95, sigma and draws scaled from that month.
    """
    if factor < 0:
        raise InputError("practice_factor", factor, "0 or more")
    if not 0 <= from_month < len(forecast.months):
        raise InputError("practice_from", from_month, f"a month of the forecast (0 to {len(forecast.months) - 1})")
    scale = np.ones(len(forecast.months))
    scale[from_month:] = factor
    return Forecast(
        item=forecast.item,
        unit=forecast.unit,
        months=list(forecast.months),
        p5=forecast.p5 * scale,
        p50=forecast.p50 * scale,
        p95=forecast.p95 * scale,
        sigma=forecast.sigma * scale,
        draws=None if forecast.draws is None else forecast.draws * scale[None, :],
        holdout=forecast.holdout,
        source=f"{forecast.source}; x{factor:g} from {forecast.months[from_month]}",
    )
