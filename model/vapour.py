"""Liquid volatile agent and its vapour: ideal-gas conversion and Dion's formula."""

from __future__ import annotations

import numpy as np

from model.reference import R_GAS, STANDARD_PRESSURE_KPA, Agent


def molar_volume_l(temperature_c=20.0, pressure_kpa=STANDARD_PRESSURE_KPA):
    """Molar volume of an ideal gas.

    Parameters
    ----------
    temperature_c : array_like
        Gas temperature. [°C]
    pressure_kpa : array_like
        Gas pressure. [kPa]

    Returns
    -------
    ndarray or float
        Molar volume. [L/mol]

    Notes
    -----
    ``V_m = R T / P``; 24.055 L/mol at 20 °C and 101.325 kPa.

    References
    ----------
    .. [1] CODATA 2018 value of the molar gas constant R = 8.314462618 J/(mol K).
    """
    t_k = np.asarray(temperature_c, dtype=float) + 273.15
    return R_GAS * t_k / np.asarray(pressure_kpa, dtype=float)


def vapour_per_ml_liquid(agent: Agent, temperature_c=20.0, pressure_kpa=STANDARD_PRESSURE_KPA):
    """Vapour volume given by one mL of liquid agent.

    Parameters
    ----------
    agent : Agent
        Reference data (molar mass, liquid density).
    temperature_c, pressure_kpa : array_like
        Conditions of the vapour. [°C], [kPa]

    Returns
    -------
    ndarray or float
        Vapour per liquid. [mL vapour / mL liquid]

    Notes
    -----
    Ideal gas: ``V_vap / V_liq = rho / M * R T / P``. At 20 °C, 101.325 kPa: about 183 for
    sevoflurane, 210 for desflurane, 195 for isoflurane and 227 for halothane. The liquid
    density is taken at its reference temperature (its change with room temperature is
    under 1 % over 15-25 °C and is ignored).

    References
    ----------
    .. [1] Dion P. The cost of anaesthetic vapours. Can J Anaesth 1992;39:633-4.
    """
    return agent.liquid_density / agent.molar_mass * molar_volume_l(temperature_c, pressure_kpa) * 1000.0


def liquid_from_vapour(vapour_ml, agent: Agent, temperature_c=20.0, pressure_kpa=STANDARD_PRESSURE_KPA):
    """Liquid volume of agent that yields a vapour volume.

    Parameters
    ----------
    vapour_ml : array_like
        Vapour volume. [mL]
    agent : Agent
        Reference data (molar mass, liquid density).
    temperature_c, pressure_kpa : array_like
        Conditions of the vapour. [°C], [kPa]

    Returns
    -------
    ndarray
        Liquid volume. [mL]

    Notes
    -----
    Inverse of :func:`vapour_per_ml_liquid`.
    """
    return np.asarray(vapour_ml, dtype=float) / vapour_per_ml_liquid(agent, temperature_c, pressure_kpa)


def liquid_used_ml(fgf_l_min, dial_pct, minutes, agent: Agent, temperature_c=20.0, pressure_kpa=STANDARD_PRESSURE_KPA):
    """Liquid agent used by a vaporizer over a period at constant settings (Dion's formula).

    Parameters
    ----------
    fgf_l_min : array_like
        Fresh gas flow through the vaporizer. [L/min]
    dial_pct : array_like
        Vaporizer dial setting. [% v/v]
    minutes : array_like
        Duration. [min]
    agent : Agent
        Reference data (molar mass, liquid density).
    temperature_c, pressure_kpa : array_like
        Room conditions. [°C], [kPa]

    Returns
    -------
    ndarray
        Liquid agent used. [mL]

    Notes
    -----
    ``mL = FGF * dial * t * M / (100 * V_m * rho)`` with ``V_m`` the molar volume at room
    conditions. With ``V_m`` = 24.12 L/mol (21 °C) this is Dion's ``M / (2412 rho)``. The
    vapour output is taken as dial x FGF, as in Dion's formula (the exact output of a
    variable-bypass vaporizer is FGF x d / (1 - d); the difference is under 1 % at 1 %
    sevoflurane and 6 % at 6 % desflurane).

    References
    ----------
    .. [1] Dion P. The cost of anaesthetic vapours. Can J Anaesth 1992;39:633-4.
    """
    fgf = np.asarray(fgf_l_min, dtype=float)
    dial = np.asarray(dial_pct, dtype=float)
    t = np.asarray(minutes, dtype=float)
    vapour_ml = fgf * 1000.0 * dial / 100.0 * t
    return vapour_ml / vapour_per_ml_liquid(agent, temperature_c, pressure_kpa)


def liquid_used_series_ml(
    elapsed_min, fgf_l_min, dial_pct, agent: Agent, temperature_c=20.0, pressure_kpa=STANDARD_PRESSURE_KPA
):
    """Liquid agent used over a sampled time series (each sample holds until the next).

    Parameters
    ----------
    elapsed_min : array_like, shape (n,)
        Sample times, increasing. [min]
    fgf_l_min, dial_pct : array_like, shape (n,)
        Fresh gas flow [L/min] and dial setting [%] at each sample.
    agent : Agent
        Reference data.
    temperature_c, pressure_kpa : float
        Room conditions. [°C], [kPa]

    Returns
    -------
    float
        Liquid agent used between the first and the last sample. [mL]

    Notes
    -----
    Dion's formula integrated with a left-hand step rule: sample *i* holds over
    ``[t_i, t_{i+1})``; the last sample closes the series and adds nothing.
    """
    t = np.asarray(elapsed_min, dtype=float)
    dt = np.diff(t)
    fgf = np.asarray(fgf_l_min, dtype=float)[:-1]
    dial = np.asarray(dial_pct, dtype=float)[:-1]
    return float(np.sum(liquid_used_ml(fgf, dial, dt, agent, temperature_c, pressure_kpa)))


def rule_of_thumb_ml_per_hour(fgf_l_min, dial_pct):
    """Liquid agent per hour by the bedside rule: 3 x dial % x FGF in L/min.

    Parameters
    ----------
    fgf_l_min : array_like
        Fresh gas flow. [L/min]
    dial_pct : array_like
        Dial setting. [%]

    Returns
    -------
    ndarray
        Liquid agent. [mL/h]

    References
    ----------
    .. [1] Common practice, no source.
    """
    return 3.0 * np.asarray(dial_pct, dtype=float) * np.asarray(fgf_l_min, dtype=float)
