"""Minimum alveolar concentration adjusted for age, and MAC-hours."""

from __future__ import annotations

import numpy as np

#: Slope of log10(MAC) against age. [1/year]
#: Source: Mapleson WW. Effect of age on MAC in humans: a meta-analysis.
#: Br J Anaesth 1996;76:179-85.
MAPLESON_SLOPE = -0.00269


def mac_at_age(mac40_pct, age_years):
    """MAC adjusted for age.

    Parameters
    ----------
    mac40_pct : array_like
        MAC at age 40. [%]
    age_years : array_like
        Patient age. [year]

    Returns
    -------
    ndarray
        MAC at that age. [%]

    Notes
    -----
    ``MAC(age) = MAC40 * 10 ** (-0.00269 * (age - 40))``: about 6 % less per decade.
    The meta-analysis covers ages over one year. The paper's own MAC40 values (the default
    set, ``model.reference.MAC_SETS["mapleson_1996"]``) keep the slope and the value it
    adjusts within one method.

    References
    ----------
    .. [1] Mapleson WW. Effect of age on MAC in humans: a meta-analysis.
       Br J Anaesth 1996;76:179-85.
    """
    age = np.asarray(age_years, dtype=float)
    return np.asarray(mac40_pct, dtype=float) * 10.0 ** (MAPLESON_SLOPE * (age - 40.0))


def mac_multiple(agent_pct, agent_mac_pct, n2o_pct=0.0, n2o_mac_pct=104.0):
    """MAC fractions of a volatile agent and N2O, added.

    Parameters
    ----------
    agent_pct, n2o_pct : array_like
        Concentrations. [%]
    agent_mac_pct, n2o_mac_pct : array_like
        MAC of each (age-adjusted). [%]

    Returns
    -------
    ndarray
        Total MAC multiple. [1]

    Notes
    -----
    MAC fractions of inhaled agents are additive.

    References
    ----------
    .. [1] Mapleson WW, Br J Anaesth 1996;76:179-85 (additivity of MAC fractions, as used
       there for N2O mixtures).
    """
    return np.asarray(agent_pct, dtype=float) / np.asarray(agent_mac_pct, dtype=float) + np.asarray(
        n2o_pct, dtype=float
    ) / np.asarray(n2o_mac_pct, dtype=float)
