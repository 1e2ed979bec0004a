"""Interrupted time series: segmented regression of a monthly measure around a programme start.

y_t = b0 + b1 t + b2 D_t + b3 (t - t0) D_t + e_t, with t the month number (0, 1, ...), t0
the first month of the programme and D_t = 1 from it (Wagner AK, Soumerai SB, Zhang F,
Ross-Degnan D, Segmented regression analysis of interrupted time series studies in
medication use research, J Clin Pharm Ther 2002;27:299-309). Ordinary least squares with
Newey-West (HAC, Bartlett kernel) standard errors for autocorrelated months (Newey WK, West
KD, Econometrica 1987;55:703-8), fitted with statsmodels. On short series these intervals
run narrow (tests/model/trends/test_its.py measures it; docs/trends.md says by how much).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import statsmodels.api as sm

from model.base.errors import InputError


def newey_west_lag(n: int) -> int:
    """Lags of the HAC covariance: floor(4 (n / 100)^(2/9)), at least 1.

    References
    ----------
    Newey WK, West KD. Automatic lag selection in covariance matrix estimation. Rev Econ
    Stud 1994;61:631-53 (the rule of thumb with the Bartlett kernel).
    """
    return max(1, int(np.floor(4.0 * (n / 100.0) ** (2.0 / 9.0))))


@dataclass(frozen=True)
class InterruptedSeries:
    """A segmented regression around a change month, in the unit of the measure.

    Attributes
    ----------
    level_change, slope_change : float
        b2 (step at the change) and b3 (change of slope per month).
    level_ci, slope_ci : tuple of float
        Their confidence intervals.
    baseline_level, baseline_slope : float
        b0 and b1.
    saved, saved_ci : float, tuple of float
        Sum over the programme months of (counterfactual - fitted) = -(n_post b2 + b3
        sum(t - t0)): what the programme saved against the pre-programme line (positive:
        less than the counterfactual), with its interval from the HAC covariance.
    fitted, counterfactual : ndarray
        The fitted line, and the pre-programme line carried on over every month.
    lags : int
        HAC lags used (:func:`newey_west_lag` unless given).
    confidence : float
    n_before, n_after : int
    """

    level_change: float
    level_ci: tuple[float, float]
    slope_change: float
    slope_ci: tuple[float, float]
    baseline_level: float
    baseline_slope: float
    saved: float
    saved_ci: tuple[float, float]
    fitted: np.ndarray
    counterfactual: np.ndarray
    lags: int
    confidence: float
    n_before: int
    n_after: int

    def sentences(self, measure: str, unit: str) -> list[str]:
        """The result in words."""
        p = f"{self.confidence:.0%}"
        return [
            f"{measure}: level change at the programme start {self.level_change:+.3g} {unit} "
            f"({p} CI {self.level_ci[0]:+.3g} to {self.level_ci[1]:+.3g}).",
            f"{measure}: slope change {self.slope_change:+.3g} {unit} a month "
            f"({p} CI {self.slope_ci[0]:+.3g} to {self.slope_ci[1]:+.3g}).",
            self._saved_sentence(unit, p)
            + f" Newey-West errors with {self.lags} lag(s) for months that follow each other.",
        ]

    def _saved_sentence(self, unit: str, p: str) -> str:
        lo, hi = self.saved_ci
        if unit == "t CO2e":
            return (
                f"Against the line before the programme carried on, the {self.n_after} programme months "
                f"saved {self.saved:.3g} t CO2e ({p} CI {lo:.3g} to {hi:.3g})."
            )
        n = self.n_after
        return (
            f"Against the line before the programme carried on, the {n} programme months were on average "
            f"{self.saved / n:.3g} {unit} lower ({p} CI {lo / n:.3g} to {hi / n:.3g})."
        )


def design(n: int, change_index: int) -> np.ndarray:
    """The segmented-regression design matrix: 1, t, D, (t - t0) D for t = 0 .. n-1."""
    t = np.arange(n, dtype=float)
    d = (t >= change_index).astype(float)
    return np.column_stack([np.ones(n), t, d, (t - change_index) * d])


def interrupted_series(values, change_index: int, confidence: float = 0.95, lags: int | None = None):
    """Segmented regression of a monthly series with Newey-West errors.

    Parameters
    ----------
    values : array_like
        One value a month, months in order with none missing (NaN refused).
    change_index : int
        Index of the first programme month; at least 3 months on each side.
    confidence : float
        Of the intervals: Student t quantiles on n - 4 degrees of freedom, the HAC
        covariance with its small-sample factor n / (n - 4) (statsmodels ``use_correction``).
        [1]
    lags : int or None
        HAC lags; None: :func:`newey_west_lag` of the number of months.

    Returns
    -------
    InterruptedSeries
    """
    y = np.asarray(values, dtype=float)
    n = len(y)
    if not np.isfinite(y).all():
        raise InputError("series", "a month with no value", "every month between the first and last needs a value")
    k = int(change_index)
    if k < 3 or n - k < 3:
        raise InputError("change date", str(k), f"at least 3 months before and 3 from it; the series has {n}")
    if not 0 < confidence < 1:
        raise InputError("confidence", str(confidence), "between 0 and 1")
    x = design(n, k)
    lag = newey_west_lag(n) if lags is None else int(lags)
    fit = sm.OLS(y, x).fit(cov_type="HAC", cov_kwds={"maxlags": lag, "use_correction": True}, use_t=True)
    b = np.asarray(fit.params, dtype=float)
    ci = np.asarray(fit.conf_int(alpha=1 - confidence), dtype=float)
    post = np.arange(k, n, dtype=float) - k
    c = np.array([0.0, 0.0, -len(post), -post.sum()])
    saved = float(c @ b)
    saved_ci = np.asarray(fit.t_test(c[None, :]).conf_int(alpha=1 - confidence), dtype=float)[0]
    return InterruptedSeries(
        level_change=float(b[2]),
        level_ci=(float(ci[2, 0]), float(ci[2, 1])),
        slope_change=float(b[3]),
        slope_ci=(float(ci[3, 0]), float(ci[3, 1])),
        baseline_level=float(b[0]),
        baseline_slope=float(b[1]),
        saved=saved,
        saved_ci=(float(saved_ci[0]), float(saved_ci[1])),
        fitted=x @ b,
        counterfactual=x[:, :2] @ b[:2],
        lags=lag,
        confidence=float(confidence),
        n_before=k,
        n_after=n - k,
    )
