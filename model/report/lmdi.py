"""What drove the change: additive LMDI-I decomposition of the change in CO2e between two periods.

The emissions of a period are written as a sum of terms, one per volatile agent and one for
nitrous oxide, each a product of factors::

    C_agent = H x (H_agent / H) x (m_agent / H_agent) x GWP_agent
    C_N2O   = H x (m_N2O / H)                         x GWP_N2O

with H the anaesthetic hours (activity), H_agent / H the agent's share of hours (agent
mix), m_agent / H_agent the kg of agent emitted per hour of that agent (intensity: fresh
gas flow and dial practice), m_N2O / H the kg of N2O per anaesthetic hour (N2O use) and the
GWP of the source used (kg CO2e per kg). The additive LMDI-I splits C_T - C_0 exactly into
one part per factor.

References
----------
.. [1] Ang B.W. The LMDI approach to decomposition analysis: a practical guide.
   Energy Policy 2005;33:867-71.
.. [2] Ang B.W., Liu N. Handling zero values in the logarithmic mean Divisia index
   decomposition approach. Energy Policy 2007;35:238-46.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

#: The factors of the decomposition, in order.
FACTORS = ("activity", "agent mix", "intensity", "N2O use", "GWP source")
#: Ways to handle a term that is zero in one period (Ang & Liu 2007).
ZERO_HANDLING = ("analytical", "small_value")
#: The small positive number of the "small value" strategy (Ang & Liu 2007 suggest 1e-10 to
#: 1e-20; the result converges to the analytical limits as it shrinks, slowly).
SMALL_VALUE = 1e-20
#: What the parts may miss the change by, in every mode: at most RESIDUAL_REL x (|baseline|
#: + |period|) + RESIDUAL_ABS_KG. [1], [kg CO2e] Common practice, no source: rounding of
#: double precision sums is some 1e-16 of their size; the bound leaves room for many terms.
RESIDUAL_REL = 1e-9
RESIDUAL_ABS_KG = 1e-9


def logmean(a, b) -> np.ndarray:
    """Logarithmic mean L(a, b) = (a - b) / (ln a - ln b), with L(a, a) = a and L(a, 0) = 0.

    Parameters
    ----------
    a, b : array_like
        Positive or zero values (any unit; the result has the same unit).

    Returns
    -------
    ndarray

    References
    ----------
    .. [1] Ang B.W. Energy Policy 2005;33:867-71 (the weight of LMDI-I).
    """
    a = np.asarray(a, dtype=float)
    b = np.asarray(b, dtype=float)
    out = np.zeros(np.broadcast(a, b).shape)
    a, b = np.broadcast_arrays(a, b)
    both = (a > 0) & (b > 0)
    same = both & np.isclose(a, b, rtol=1e-12, atol=0.0)
    diff = both & ~same
    with np.errstate(divide="ignore", invalid="ignore"):
        out[diff] = (a[diff] - b[diff]) / (np.log(a[diff]) - np.log(b[diff]))
    out[same] = (a[same] + b[same]) / 2.0
    return out


def lmdi_additive(v0, v1, x0, x1) -> np.ndarray:
    """Additive LMDI-I: the contribution of each factor of each term to v1 - v0.

    Parameters
    ----------
    v0, v1 : array_like, shape (n_terms,)
        The terms in the first (baseline) and second period; ``v = prod(x, axis=0)``.
    x0, x1 : array_like, shape (n_factors, n_terms)
        The factors of each term. A factor that is undefined in a period where its term is
        zero (e.g. kg per hour of an agent not used) may be NaN.

    Returns
    -------
    ndarray, shape (n_factors, n_terms)
        ``L(v1, v0) * ln(x1 / x0)``; summed over factors it gives ``v1 - v0`` for each term
        (within ``RESIDUAL_REL`` of the term's size, see :func:`log_share_split`).

    Notes
    -----
    A term that is zero in one period only is handled by the analytical limits of Ang and
    Liu 2007 (their limits of the "small value" strategy as the small value goes to zero):
    the whole change of the term, ``v1 - v0``, goes to the factor that is zero (the first
    such factor in order, since later ones are then undefined), and every other factor of
    that term gets 0. A term zero in both periods contributes nothing.

    References
    ----------
    .. [1] Ang B.W. Energy Policy 2005;33:867-71, Table 1 (additive LMDI-I).
    .. [2] Ang B.W., Liu N. Energy Policy 2007;35:238-46 (zero values).
    """
    v0 = np.asarray(v0, dtype=float)
    v1 = np.asarray(v1, dtype=float)
    x0 = np.asarray(x0, dtype=float)
    x1 = np.asarray(x1, dtype=float)
    out = np.zeros(x0.shape)
    ok0 = np.all((x0 > 0) & np.isfinite(x0), axis=0)
    ok1 = np.all((x1 > 0) & np.isfinite(x1), axis=0)
    pos = (v0 > 0) & (v1 > 0) & ok0 & ok1
    out[:, pos] = log_share_split(v1[pos] - v0[pos], logmean(v1[pos], v0[pos]), x0[:, pos], x1[:, pos])
    _analytical_limits(out, v0, v1, x0, x1, pos)
    return out


def log_share_split(change, weight, x0, x1) -> np.ndarray:
    """Split each term's change over its factors in proportion to each factor's log change.

    Parameters
    ----------
    change : array_like, shape (n_terms,)
        ``v1 - v0`` of each term (any unit).
    weight : array_like, shape (n_terms,)
        ``L(v1, v0)`` of each term, used only where the factors' log changes cancel (the term
        did not move).
    x0, x1 : array_like, shape (n_factors, n_terms)
        The factors, positive and finite.

    Returns
    -------
    ndarray, shape (n_factors, n_terms)
        ``change * ln(x1_k / x0_k) / sum_j ln(x1_j / x0_j)``. Where the log changes cancel,
        ``weight * ln(x1_k / x0_k)``, with what rounding leaves of ``change`` on the factor
        that moved most. A column that cannot be worked out in floating point (an overflow)
        is NaN.

    Notes
    -----
    With ``v = prod(x)``, ``L(v1, v0) = (v1 - v0) / ln(v1 / v0)`` and
    ``ln(v1 / v0) = sum_j ln(x1_j / x0_j)``, so this is the LMDI-I part
    ``L(v1, v0) ln(x1_k / x0_k)`` of [1]_ written as a share of the change. Written so, the
    parts of a term add to its change to rounding even where ``prod(x)`` is not quite ``v``:
    small values put in the place of zeros [2]_, or the product of a tiny user GWP rounded.

    References
    ----------
    .. [1] Ang B.W. Energy Policy 2005;33:867-71, Table 1 (additive LMDI-I).
    .. [2] Ang B.W., Liu N. Energy Policy 2007;35:238-46 (the small value strategy).
    """
    change = np.asarray(change, dtype=float)
    weight = np.asarray(weight, dtype=float)
    x0 = np.asarray(x0, dtype=float)
    x1 = np.asarray(x1, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        # ln x1 - ln x0 rather than ln(x1 / x0): the ratio of two tiny factors can overflow.
        r = np.log(x1) - np.log(x0)
        s = r.sum(axis=0)
        split = np.isfinite(s) & (s != 0)
        out = np.where(split, change * (r / np.where(split, s, 1.0)), weight * r)
        left = np.where(split, 0.0, change - out.sum(axis=0))
    if out.shape[1]:
        cols = np.arange(out.shape[1])
        most = np.argmax(np.where(np.isfinite(r), np.abs(r), -1.0), axis=0)
        out[most, cols] = out[most, cols] + left
    out[:, ~np.all(np.isfinite(out), axis=0)] = np.nan
    return out


def _analytical_limits(out, v0, v1, x0, x1, done) -> None:
    """Fill, in place, the terms not ``done`` or not finite with the analytical limits of Ang and Liu 2007."""
    done = done & np.all(np.isfinite(out), axis=0)
    out[:, ~done] = 0.0

    def bad(x):
        return (x == 0) | ~np.isfinite(x)

    for i in np.flatnonzero(~done & (v0 != v1)):
        zero_side = x0[:, i] if v0[i] == 0 else x1[:, i] if v1[i] == 0 else None
        hits = (
            np.flatnonzero(bad(zero_side)) if zero_side is not None else np.flatnonzero(bad(x0[:, i]) | bad(x1[:, i]))
        )
        k = int(hits[0]) if len(hits) else 0
        out[k, i] = v1[i] - v0[i]


@dataclass(frozen=True)
class PeriodMix:
    """What the decomposition needs of one period.

    Attributes
    ----------
    hours : float
        Anaesthetic hours, all cases (those without a volatile agent too). [h]
    agent_hours : dict
        Hours of cases run with each volatile agent. [h]
    agent_kg : dict
        Agent emitted, by volatile agent. [kg]
    agent_gwp : dict
        GWP of each volatile agent under the period's source. [kg CO2e/kg]
    n2o_kg : float
        Nitrous oxide emitted. [kg]
    n2o_gwp : float
        GWP of nitrous oxide. [kg CO2e/kg]
    gwp_label : str
        The GWP source used, for sentences.
    """

    hours: float
    agent_hours: dict
    agent_kg: dict
    agent_gwp: dict
    n2o_kg: float
    n2o_gwp: float
    gwp_label: str = ""

    @property
    def co2e_kg(self) -> float:
        """CO2e of the period [kg]."""
        return float(sum(self.agent_kg[a] * self.agent_gwp[a] for a in self.agent_kg) + self.n2o_kg * self.n2o_gwp)


def _factors(mix: PeriodMix, agents, small: float | None):
    """Terms (n,) and factors (5, n) of a period; ``small`` replaces zero data (small value strategy)."""

    def z(v):
        v = float(v)
        return small if (small is not None and v == 0) else v

    h = z(mix.hours)
    n = len(agents) + 1
    x = np.ones((len(FACTORS), n))
    v = np.zeros(n)
    with np.errstate(divide="ignore", invalid="ignore"):
        for j, a in enumerate(agents):
            ha, ma = z(mix.agent_hours.get(a, 0.0)), z(mix.agent_kg.get(a, 0.0))
            g = mix.agent_gwp.get(a, 0.0)
            x[0, j] = h
            x[1, j] = ha / h if h > 0 else np.nan
            x[2, j] = ma / ha if ha > 0 else np.nan
            x[4, j] = g
            v[j] = ma * g
        m = z(mix.n2o_kg)
        x[0, -1] = h
        x[3, -1] = m / h if h > 0 else np.nan
        x[4, -1] = mix.n2o_gwp
        v[-1] = m * mix.n2o_gwp
    return v, x


@dataclass
class Decomposition:
    """The change in CO2e between a baseline and a period, split by factor.

    Attributes
    ----------
    baseline_kg, period_kg : float
        CO2e of each. [kg]
    by_factor : DataFrame
        ``factor``, ``contribution_kg`` (one row per ``FACTORS``).
    detail : DataFrame
        ``factor``, ``term`` (agent or "nitrous_oxide"), ``contribution_kg``.
    zero_handling : str
        One of ``ZERO_HANDLING``.
    """

    baseline_kg: float
    period_kg: float
    by_factor: pd.DataFrame
    detail: pd.DataFrame
    zero_handling: str

    @property
    def change_kg(self) -> float:
        """Period less baseline [kg CO2e]."""
        return self.period_kg - self.baseline_kg

    @property
    def residual_kg(self) -> float:
        """What the parts miss the change by: change less the sum of the parts [kg CO2e]."""
        return float(self.change_kg - self.by_factor["contribution_kg"].sum())

    def contribution(self, factor: str) -> float:
        """Contribution of one factor [kg CO2e]."""
        return float(self.by_factor.set_index("factor").loc[factor, "contribution_kg"])


def decompose(
    baseline: PeriodMix, period: PeriodMix, zero_handling: str = "analytical", small_value: float = SMALL_VALUE
) -> Decomposition:
    """Split the change in CO2e from ``baseline`` to ``period`` into its factors (additive LMDI-I).

    Parameters
    ----------
    baseline, period : PeriodMix
    zero_handling : {"analytical", "small_value"}
        "analytical": the limits of Ang and Liu 2007 (default); "small_value": every zero in
        the data (hours, kg) replaced by ``small_value`` first, Ang and Liu 2007's other
        strategy. It converges to the analytical limits, but only as 1 / ln(1 / small_value):
        with 1e-20 an agent dropped entirely still leaves a few per cent of its change on
        the intensity factor, which is why the analytical limits are the default.
    small_value : float
        The small positive number of the "small value" strategy.

    Returns
    -------
    Decomposition
        The parts add to ``period_kg - baseline_kg`` in either mode: the residual is at most
        ``RESIDUAL_REL x (|baseline_kg| + |period_kg|) + RESIDUAL_ABS_KG``.

    References
    ----------
    .. [1] Ang B.W. Energy Policy 2005;33:867-71.
    .. [2] Ang B.W., Liu N. Energy Policy 2007;35:238-46.
    """
    if zero_handling not in ZERO_HANDLING:
        raise ValueError(f"zero_handling must be one of {ZERO_HANDLING}, got {zero_handling!r}")
    agents = sorted(set(baseline.agent_kg) | set(period.agent_kg) | set(baseline.agent_hours) | set(period.agent_hours))
    v0, x0 = _factors(baseline, agents, None)
    v1, x1 = _factors(period, agents, None)
    if zero_handling == "small_value":
        small = float(small_value)
        if not (0.0 < small < 1.0):
            raise ValueError(f"small_value must be a positive number below 1, got {small_value!r}")
        # Every zero in the data (and a GWP of zero) replaced by the small value; the change
        # of each term is its real change, split by the factors' log changes.
        s0, s1 = (_factors(m, agents, small)[1] for m in (baseline, period))
        s0, s1 = np.where(s0 == 0, small, s0), np.where(s1 == 0, small, s1)
        use = ((v0 > 0) | (v1 > 0)) & np.all((s0 > 0) & np.isfinite(s0) & (s1 > 0) & np.isfinite(s1), axis=0)
        c = np.zeros(x0.shape)
        with np.errstate(over="ignore", under="ignore"):
            w = logmean(np.exp(np.log(s1[:, use]).sum(axis=0)), np.exp(np.log(s0[:, use]).sum(axis=0)))
        c[:, use] = log_share_split(v1[use] - v0[use], w, s0[:, use], s1[:, use])
        _analytical_limits(c, v0, v1, x0, x1, use)
    else:
        c = lmdi_additive(v0, v1, x0, x1)
    terms = list(agents) + ["nitrous_oxide"]
    detail = pd.DataFrame(
        [(f, t, float(c[i, j])) for i, f in enumerate(FACTORS) for j, t in enumerate(terms)],
        columns=["factor", "term", "contribution_kg"],
    )
    by = pd.DataFrame({"factor": list(FACTORS), "contribution_kg": c.sum(axis=1)})
    return Decomposition(baseline.co2e_kg, period.co2e_kg, by, detail, zero_handling)
