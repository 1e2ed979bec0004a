"""Duration nodes of a case type and linear interpolation between them.

Log-normal stretch minutes, the nodes spanning them, linear interpolation and its exact moments.
"""

from __future__ import annotations

import math

import numpy as np
from scipy.special import ndtr

# --------------------------------------------------------------------------------------
# Per-type fixed amounts and per-minute rates.


def stretch_minutes_moments(median_min, spread, fixed_min):
    """Mean and variance of the stretched phase's minutes of one case.

    Parameters
    ----------
    median_min : array_like
        Median case duration. [min]
    spread : array_like
        Standard deviation of ln(duration) of the log-normal case duration. [1]
    fixed_min : array_like
        Minutes of the phases that keep their length. [min]

    Returns
    -------
    mean, variance : ndarray
        Of ``max(D - fixed, 0)``. [min], [min^2]

    Notes
    -----
    For ln D ~ N(mu, s^2): ``E[D^k 1{D>f}] = exp(k mu + k^2 s^2 / 2) Phi((mu + k s^2 - ln f) / s)``,
    so ``E[(D-f)+] = E[D 1{D>f}] - f P(D>f)`` and
    ``E[(D-f)+^2] = E[D^2 1{D>f}] - 2 f E[D 1{D>f}] + f^2 P(D>f)``.

    References
    ----------
    .. [1] Johnson NL, Kotz S, Balakrishnan N. Continuous Univariate Distributions, vol. 1,
       2nd ed., 1994, ch. 14 (partial moments of the log-normal distribution).
    """
    med = np.asarray(median_min, dtype=float)
    s = np.asarray(spread, dtype=float)
    f = np.asarray(fixed_min, dtype=float)
    mu = np.log(med)
    zero = s <= 0
    s_safe = np.where(zero, 1.0, s)
    with np.errstate(divide="ignore"):
        log_f = np.where(f > 0, np.log(np.where(f > 0, f, 1.0)), -np.inf)
    p = ndtr((mu - log_f) / s_safe)
    e1 = np.exp(mu + s_safe**2 / 2) * ndtr((mu + s_safe**2 - log_f) / s_safe)
    e2 = np.exp(2 * mu + 2 * s_safe**2) * ndtr((mu + 2 * s_safe**2 - log_f) / s_safe)
    m1 = e1 - f * p
    m2 = e2 - 2 * f * e1 + f * f * p
    var = np.maximum(m2 - m1 * m1, 0.0)
    fixed_case = np.maximum(med - f, 0.0)
    return np.where(zero, fixed_case, m1), np.where(zero, 0.0, var)


#: Duration nodes of each case type as standard normal quantiles of ln(duration): the type
#: is simulated at ``median x exp(spread x z)`` for these ``z`` (a numerical choice, no
#: source). Per-case totals between nodes are interpolated linearly in the stretched minutes
#: and extrapolated linearly beyond the outer nodes; against direct simulation of the
#: Fernhollow mix at random durations the error is under 0.6 % (tests/model/year/test_year.py checks 1 %).
NODE_Z = (-2.5, -1.25, 0.0, 1.25, 2.5)


def duration_nodes(median_min, spread, fixed_min, z=NODE_Z) -> np.ndarray:
    """Stretched minutes at which a case type is simulated: sorted, distinct, >= 0 [min].

    The median is always a node, so a type without spread is simulated at its median only.
    """
    x = np.maximum(median_min * np.exp(spread * np.asarray(z, dtype=float)) - fixed_min, 0.0)
    x = np.unique(np.append(x, max(median_min - fixed_min, 0.0)))
    keep = np.concatenate([[True], np.diff(x) > 1e-6 * np.maximum(x[1:], 1.0)])
    return x[keep]


def interpolate_nodes(nodes_min, values, stretch_min) -> np.ndarray:
    """Per-case totals at any stretched minutes from their values at the nodes.

    Parameters
    ----------
    nodes_min : array_like, (K,)
        Stretched minutes of the nodes, increasing. [min]
    values : array_like, (K, Q)
        Per-case totals at the nodes.
    stretch_min : array_like, (N,)
        Stretched minutes wanted (>= 0). [min]

    Returns
    -------
    ndarray, (N, Q)
        Piecewise-linear interpolation, extrapolated linearly beyond the outer nodes (the
        per-case totals are near-linear in the stretched maintenance phase).
    """
    x = np.asarray(nodes_min, dtype=float)
    f = np.asarray(values, dtype=float).reshape(len(x), -1)
    s = np.asarray(stretch_min, dtype=float)
    if len(x) == 1:
        return np.broadcast_to(f[0], (len(s), f.shape[1])).copy()
    j = np.clip(np.searchsorted(x, s, side="right") - 1, 0, len(x) - 2)
    slope = (f[1:] - f[:-1]) / (x[1:] - x[:-1])[:, None]
    return f[j] + slope[j] * (s - x[j])[:, None]


def piecewise_linear_moments(nodes_min, values, median_min, spread, fixed_min):
    """Mean, covariance with the stretched minutes, and variance of interpolated per-case totals.

    Parameters
    ----------
    nodes_min, values : array_like, (K,), (K, Q)
        As in :func:`interpolate_nodes`, which defines the function ``f(x)``.
    median_min, spread, fixed_min : float
        The log-normal case duration ``D`` (median [min], SD of ln D [1]) and the minutes of
        the phases that keep their length [min]; ``x = max(D - fixed, 0)``.

    Returns
    -------
    mean, cov, var : ndarray, (Q,)
        ``E[f(x)]``, ``Cov(f(x), x)`` and ``Var(f(x))``.

    Notes
    -----
    Exact for the piecewise-linear ``f``: on each segment ``f = alpha + beta D`` and the
    partial moments ``E[D^k 1{a < D <= b}] = exp(k mu + k^2 s^2 / 2) [Phi((ln b - mu - k s^2) / s)
    - Phi((ln a - mu - k s^2) / s)]`` of the log-normal give every term; cases shorter than
    the fixed phases (``x = 0``) take ``f(0)``.

    References
    ----------
    .. [1] Johnson NL, Kotz S, Balakrishnan N. Continuous Univariate Distributions, vol. 1,
       2nd ed., 1994, ch. 14 (partial moments of the log-normal distribution).
    """
    x = np.asarray(nodes_min, dtype=float)
    f = np.asarray(values, dtype=float).reshape(len(x), -1)
    zero = np.zeros(f.shape[1])
    if spread <= 0:
        at = max(median_min - fixed_min, 0.0)
        return interpolate_nodes(x, f, [at])[0], zero, zero
    if len(x) == 1:
        return f[0].copy(), zero, zero
    mu, s, c = math.log(median_min), float(spread), float(fixed_min)
    b = (f[1:] - f[:-1]) / (x[1:] - x[:-1])[:, None]  # (K-1, Q) slopes per segment
    a = f[:-1] - b * x[:-1, None]  # intercepts in x
    edges = np.concatenate([[0.0], x[1:-1], [np.inf]]) + c  # segment edges in D
    with np.errstate(divide="ignore"):
        log_e = np.log(edges)

    def partial(k):
        cdf = ndtr((log_e - mu - k * s * s) / s)
        return math.exp(k * mu + k * k * s * s / 2.0) * np.diff(cdf)  # (K-1,)

    m0, m1, m2 = partial(0), partial(1), partial(2)
    p_short = float(ndtr((math.log(c) - mu) / s)) if c > 0 else 0.0
    alpha = a - b * c  # f = alpha + b D on a segment
    m0, m1, m2 = m0[:, None], m1[:, None], m2[:, None]
    e_f = a[0] * p_short + (alpha * m0 + b * m1).sum(axis=0)
    e_fx = (alpha * m1 - alpha * c * m0 + b * m2 - b * c * m1).sum(axis=0)
    e_f2 = a[0] ** 2 * p_short + (alpha**2 * m0 + 2 * alpha * b * m1 + b**2 * m2).sum(axis=0)
    e_x = float(stretch_minutes_moments(median_min, spread, fixed_min)[0])
    return e_f, e_fx - e_f * e_x, np.maximum(e_f2 - e_f * e_f, 0.0)
