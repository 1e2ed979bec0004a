"""Emitted mass of agents and N2O, and their CO2-equivalent."""

from __future__ import annotations

import numpy as np

from model.reference import STANDARD_PRESSURE_KPA
from model.vapour import molar_volume_l


def gas_mass_g(volume_l, molar_mass_g_mol, temperature_c=20.0, pressure_kpa=STANDARD_PRESSURE_KPA):
    """Mass of a gas volume, ideal gas.

    Parameters
    ----------
    volume_l : array_like
        Gas volume at the stated conditions. [L]
    molar_mass_g_mol : float
        Molar mass. [g/mol]
    temperature_c, pressure_kpa : array_like
        Conditions of the volume. [°C], [kPa]

    Returns
    -------
    ndarray
        Mass. [g]

    Notes
    -----
    ``m = V / V_m * M``: 1 L of N2O at 20 °C, 101.325 kPa is 1.83 g.

    References
    ----------
    .. [1] Ideal gas law; CODATA 2018 molar gas constant.
    """
    return np.asarray(volume_l, dtype=float) / molar_volume_l(temperature_c, pressure_kpa) * molar_mass_g_mol


def emitted_mass_g(delivered_g, uptake_g=0.0, metabolised_fraction=0.0, capture_efficiency=0.0):
    """Mass of agent released to the atmosphere.

    Parameters
    ----------
    delivered_g : array_like
        Agent delivered into the breathing system. [g]
    uptake_g : array_like
        Agent taken up by the patient. [g] With 0 (uptake unknown) all delivered agent
        counts as emitted, an upper bound.
    metabolised_fraction : float
        Share of the uptake that is metabolised and never exhaled. [1]
    capture_efficiency : array_like
        Share of the scavenged agent captured before release. [1]

    Returns
    -------
    ndarray
        Emitted mass. [g]

    Notes
    -----
    ``emitted = (delivered - f_met * uptake) * (1 - capture)``. Agent taken up and not
    metabolised is exhaled later and is counted as emitted.

    References
    ----------
    .. [1] Sulbaek Andersen MP et al. Anesth Analg 2012;114:1081-5 (emission as the
       delivered agent, metabolism neglected except for a small share).
    """
    delivered = np.asarray(delivered_g, dtype=float)
    metabolised = np.minimum(
        np.asarray(metabolised_fraction, dtype=float) * np.asarray(uptake_g, dtype=float), delivered
    )
    return (delivered - metabolised) * (1.0 - np.asarray(capture_efficiency, dtype=float))


def co2e_kg(emitted_g, gwp):
    """CO2-equivalent of an emitted mass.

    Parameters
    ----------
    emitted_g : array_like
        Emitted mass. [g]
    gwp : array_like
        Global warming potential over the chosen horizon. [kg CO2e / kg]

    Returns
    -------
    ndarray
        CO2-equivalent. [kg CO2e]

    References
    ----------
    .. [1] IPCC AR6 WG1 (2021), Ch. 7: CO2e = mass x GWP.
    """
    return np.asarray(emitted_g, dtype=float) / 1000.0 * np.asarray(gwp, dtype=float)
