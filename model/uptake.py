"""Patient uptake of volatile agents and N2O, as tissue compartments the circle model can carry.

Lowe's square-root-of-time model and a physiological compartment model (vessel-rich group,
muscle, fat).

Both models are written the same way for the circle integrator (:mod:`model.circle`): a set
of tissue compartments k, each with a conductance ``G_k`` (blood flow x blood/gas partition
coefficient, L gas/min per unit alveolar fraction) and a capacity ``C_k`` (tissue volume x
tissue/gas partition coefficient, L gas per unit fraction), fed from the alveolar gas. The
uptake rate at alveolar fraction ``F_A`` is ``sum_k G_k (F_A - P_k)`` with ``P_k`` the
tissue partial pressure as a gas fraction.
"""

from __future__ import annotations

import functools
from types import MappingProxyType

import numpy as np

from model.reference import FROM_MEMORY, Sourced

UPTAKE_MODELS = ("compartment", "lowe")
DEFAULT_UPTAKE_MODEL = "compartment"

_EGER = "Eger EI II, Anesthetic Uptake and Action, 1974 (tissue groups of a 70 kg man), from memory"
_YASUDA_TISSUE = (
    "Yasuda N, Targ AG, Eger EI II. Solubility of I-653, sevoflurane, isoflurane "
    "and halothane in human tissues. Anesth Analg 1989;69:370-3, from memory"
)
_N2O_TISSUE = "Eger EI II, Anesthetic Uptake and Action, 1974 (N2O tissue/blood), from memory"

#: Tissue groups: share of body weight (volume per kg, L/kg, from a 70 kg man) and share
#: of cardiac output. The vessel-poor group (bone, ligament; ~1.5 % of flow) is folded
#: into fat and muscle, as the group takes up little in a case's hours.
TISSUE_GROUPS = ("vessel_rich", "muscle", "fat")
TISSUE_VOLUME_L_PER_KG = MappingProxyType(
    {
        "vessel_rich": Sourced(6.0 / 70.0, "L/kg", _EGER + " (6 L)", FROM_MEMORY),
        "muscle": Sourced(33.0 / 70.0, "L/kg", _EGER + " (33 L, muscle and skin)", FROM_MEMORY),
        "fat": Sourced(14.5 / 70.0, "L/kg", _EGER + " (14.5 L)", FROM_MEMORY),
    }
)
TISSUE_FLOW_SHARE = MappingProxyType(
    {
        "vessel_rich": Sourced(0.75, "1", _EGER + " (75 % of cardiac output)", FROM_MEMORY),
        "muscle": Sourced(0.19, "1", _EGER + " (19 %)", FROM_MEMORY),
        "fat": Sourced(0.06, "1", _EGER + " (6 %, with the vessel-poor group)", FROM_MEMORY),
    }
)
#: Tissue/blood partition coefficients (vessel-rich group taken as brain). [1]
TISSUE_BLOOD = MappingProxyType(
    {
        "desflurane": {
            "vessel_rich": Sourced(1.3, "1", _YASUDA_TISSUE, FROM_MEMORY),
            "muscle": Sourced(2.0, "1", _YASUDA_TISSUE, FROM_MEMORY),
            "fat": Sourced(27.0, "1", _YASUDA_TISSUE, FROM_MEMORY),
        },
        "sevoflurane": {
            "vessel_rich": Sourced(1.7, "1", _YASUDA_TISSUE, FROM_MEMORY),
            "muscle": Sourced(3.1, "1", _YASUDA_TISSUE, FROM_MEMORY),
            "fat": Sourced(48.0, "1", _YASUDA_TISSUE, FROM_MEMORY),
        },
        "isoflurane": {
            "vessel_rich": Sourced(1.6, "1", _YASUDA_TISSUE, FROM_MEMORY),
            "muscle": Sourced(2.9, "1", _YASUDA_TISSUE, FROM_MEMORY),
            "fat": Sourced(45.0, "1", _YASUDA_TISSUE, FROM_MEMORY),
        },
        "halothane": {
            "vessel_rich": Sourced(1.9, "1", _YASUDA_TISSUE, FROM_MEMORY),
            "muscle": Sourced(3.4, "1", _YASUDA_TISSUE, FROM_MEMORY),
            "fat": Sourced(51.0, "1", _YASUDA_TISSUE, FROM_MEMORY),
        },
        "nitrous_oxide": {
            "vessel_rich": Sourced(1.1, "1", _N2O_TISSUE, FROM_MEMORY),
            "muscle": Sourced(1.2, "1", _N2O_TISSUE, FROM_MEMORY),
            "fat": Sourced(2.3, "1", _N2O_TISSUE, FROM_MEMORY),
        },
    }
)

#: N2O uptake of an adult breathing N2O: about 1000 t^-0.5 mL/min. [L/min at t = 1 min]
#: Source: Severinghaus JW. The rate of uptake of nitrous oxide in man. J Clin Invest
#: 1954;33:1183-9, from memory.
SEVERINGHAUS_NITROUS_OXIDE_L_MIN = Sourced(
    1.0, "L/min", "Severinghaus JW, J Clin Invest 1954;33:1183-9, from memory", FROM_MEMORY
)
#: End-tidal N2O fraction at which Severinghaus' figure holds. [1]  From memory (about 75 %).
SEVERINGHAUS_N2O_FRACTION = 0.75
#: Cardiac output of the 70 kg adult of that figure, by Brody's scaling. [L/min]
_Q70 = 0.2 * 70.0**0.75

#: Time constants of the exponential sum standing in for Lowe's t^-0.5 kernel. [min]
#: Chosen here (a numerical device, no source): 1/64 to 4096 min in steps of 4.
LOWE_TAUS_MIN = 4.0 ** np.arange(-3, 7)


@functools.lru_cache(maxsize=1)
def lowe_kernel_weights() -> np.ndarray:
    """Weights ``w_k`` with ``sum_k w_k exp(-t/tau_k) ~ t^-0.5`` (t in min).

    Returns
    -------
    ndarray, shape (10,)
        Weights for :data:`LOWE_TAUS_MIN`. [min^-0.5]

    Notes
    -----
    Fitted once by non-negative least squares so that the cumulative
    ``sum_k w_k tau_k (1 - exp(-t/tau_k))`` matches ``2 sqrt(t)`` within 0.5 % over
    0.1-3000 min (relative error). A numerical device, no source: it lets Lowe's law run
    in the same compartment integrator as the physiological model.
    """
    from scipy.optimize import nnls

    t = np.geomspace(0.1, 3000.0, 400)
    taus = LOWE_TAUS_MIN
    design = taus * (1.0 - np.exp(-t[:, None] / taus[None, :])) / (2.0 * np.sqrt(t))[:, None]
    weights, _ = nnls(design, np.ones_like(t))
    return weights


def lowe_uptake_rate_ml_min(t_min, alveolar_pct, blood_gas, cardiac_output_l_min):
    """Lowe's square-root-of-time uptake rate at a constant alveolar concentration.

    Parameters
    ----------
    t_min : array_like
        Time since the alveolar concentration was reached. [min]
    alveolar_pct : array_like
        Alveolar concentration, e.g. f x MAC. [%]
    blood_gas : float
        Blood/gas partition coefficient. [1]
    cardiac_output_l_min : array_like
        Cardiac output. [L/min]

    Returns
    -------
    ndarray
        Uptake rate of vapour. [mL/min]

    Notes
    -----
    ``q(t) = f MAC[%] lambda_B/G Q[dL/min] t^-0.5``.

    References
    ----------
    .. [1] Lowe HJ, Ernst EA. The Quantitative Practice of Anesthesia: Use of Closed
       Circuit. 1981.
    """
    q_dl = np.asarray(cardiac_output_l_min, dtype=float) * 10.0
    return np.asarray(alveolar_pct, dtype=float) * blood_gas * q_dl * np.asarray(t_min, dtype=float) ** -0.5


def lowe_cumulative_ml(t_min, alveolar_pct, blood_gas, cardiac_output_l_min):
    """Lowe's cumulative uptake ``2 f MAC lambda Q sqrt(t)`` [mL vapour].

    Parameters are those of :func:`lowe_uptake_rate_ml_min`.

    References
    ----------
    .. [1] Lowe HJ, Ernst EA. The Quantitative Practice of Anesthesia: Use of Closed
       Circuit. 1981.
    """
    q_dl = np.asarray(cardiac_output_l_min, dtype=float) * 10.0
    return 2.0 * np.asarray(alveolar_pct, dtype=float) * blood_gas * q_dl * np.sqrt(np.asarray(t_min, dtype=float))


def lowe_priming_ml(alveolar_pct, circuit_volume_l, frc_l):
    """Lowe's priming dose: vapour that fills the circuit and the lungs [mL].

    Parameters
    ----------
    alveolar_pct : array_like
        Concentration to reach. [%]
    circuit_volume_l, frc_l : array_like
        Gas volume of the circle system and the functional residual capacity. [L]

    Notes
    -----
    ``(V_circuit + FRC) x F``; Lowe's arterial loading dose is carried by the fastest
    compartment of the kernel (see :func:`tissue_compartments`).

    References
    ----------
    .. [1] Lowe HJ, Ernst EA. The Quantitative Practice of Anesthesia: Use of Closed
       Circuit. 1981.
    """
    return (
        (np.asarray(circuit_volume_l, dtype=float) + np.asarray(frc_l, dtype=float))
        * 1000.0
        * np.asarray(alveolar_pct, dtype=float)
        / 100.0
    )


def tissue_compartments(model, species, blood_gas, weight_kg, cardiac_output_l_min, physiology=None):
    """Conductances and capacities of the tissue compartments of one species.

    Parameters
    ----------
    model : {"compartment", "lowe"}
        The uptake model.
    species : str
        Agent key: a volatile agent or "nitrous_oxide".
    blood_gas : float
        Blood/gas partition coefficient of the species. [1]
    weight_kg, cardiac_output_l_min : array_like, shape (n,)
        Patient weight [kg] and cardiac output [L/min].
    physiology : mapping, optional
        Multipliers of the compartment model's uncertain values, each a scalar or shape
        (n,) (:mod:`model.physiology`): ``tissue_blood_vessel_rich``, ``tissue_blood_muscle``,
        ``tissue_blood_fat``, ``volume_muscle``, ``volume_fat``, ``flow_muscle``,
        ``flow_fat`` (the vessel-rich group takes the rest of the cardiac output). Missing
        keys, or None, leave the central values exactly; the "lowe" model has no tissue
        groups and ignores them. [1]

    Returns
    -------
    G : ndarray, shape (k, n)
        Conductance of each compartment. [L gas/min per unit alveolar fraction]
    C : ndarray, shape (k, n)
        Capacity of each compartment. [L gas per unit fraction]

    Notes
    -----
    "compartment": ``G = share_k Q lambda_B/G``, ``C = V_k lambda_T/B lambda_B/G`` with
    the tissue groups of Eger (1974) scaled by weight and Yasuda's tissue/blood
    coefficients (1989). "lowe": an exponential sum whose step response is Lowe's
    ``lambda Q t^-0.5`` (for N2O, Severinghaus' ``1000 t^-0.5`` mL/min at 75 %, scaled by
    cardiac output).

    References
    ----------
    .. [1] Eger EI II. Anesthetic Uptake and Action. 1974.
    .. [2] Yasuda N, Targ AG, Eger EI II. Anesth Analg 1989;69:370-3.
    .. [3] Lowe HJ, Ernst EA. The Quantitative Practice of Anesthesia: Use of Closed
       Circuit. 1981.
    .. [4] Severinghaus JW. J Clin Invest 1954;33:1183-9.
    """
    if model not in UPTAKE_MODELS:
        raise ValueError(f"uptake model must be one of {UPTAKE_MODELS}, got {model!r}")
    w = np.atleast_1d(np.asarray(weight_kg, dtype=float))
    q = np.atleast_1d(np.asarray(cardiac_output_l_min, dtype=float))
    w, q = np.broadcast_arrays(w, q)
    if model == "compartment":
        table = TISSUE_BLOOD[species]
        share = np.array([TISSUE_FLOW_SHARE[g].value for g in TISSUE_GROUPS])[:, None]
        vol = np.array([TISSUE_VOLUME_L_PER_KG[g].value for g in TISSUE_GROUPS])[:, None]
        tb = np.array([table[g].value for g in TISSUE_GROUPS])[:, None]
        if physiology is not None:
            share, vol, tb = _scaled_groups(share, vol, tb, physiology)
        G = share * q[None, :] * blood_gas
        C = vol * w[None, :] * tb * blood_gas
        return G, C
    if species == "nitrous_oxide":
        nitrous_oxide_l_min: float = SEVERINGHAUS_NITROUS_OXIDE_L_MIN.value  # type: ignore[assignment]  # a Sourced constant, 1.0, never None
        amplitude = nitrous_oxide_l_min / SEVERINGHAUS_N2O_FRACTION * q / _Q70
    else:
        amplitude = blood_gas * q
    weights = lowe_kernel_weights()[:, None]
    taus = LOWE_TAUS_MIN[:, None]
    G = weights * amplitude[None, :]
    return G, G * taus


def _scaled_groups(share, vol, tb, physiology):
    """Flow shares, volumes and tissue/blood coefficients times their multipliers, shape (3, n) or (3, 1).

    The muscle and fat flow shares scale; the vessel-rich group keeps the rest of the cardiac
    output, written as ``share + sum of (1 - m) share`` so that multipliers of exactly 1 give
    the central shares exactly.
    """

    def m(key):
        return np.atleast_1d(np.asarray(physiology.get(key, 1.0), dtype=float))

    flow_muscle, flow_fat = m("flow_muscle"), m("flow_fat")
    vrg_share = share[0] + share[1] * (1.0 - flow_muscle) + share[2] * (1.0 - flow_fat)
    share = np.stack(np.broadcast_arrays(np.maximum(vrg_share, 0.05), share[1] * flow_muscle, share[2] * flow_fat))
    vol = np.stack(np.broadcast_arrays(vol[0], vol[1] * m("volume_muscle"), vol[2] * m("volume_fat")))
    tb = np.stack(
        np.broadcast_arrays(
            tb[0] * m("tissue_blood_vessel_rich"), tb[1] * m("tissue_blood_muscle"), tb[2] * m("tissue_blood_fat")
        )
    )
    return share, vol, tb


def constant_alveolar_uptake_l(t_min, G, C):
    """Cumulative uptake at a constant alveolar fraction of 1 (step response).

    Parameters
    ----------
    t_min : array_like, shape (m,)
        Times. [min]
    G, C : ndarray, shape (k, n)
        Compartments from :func:`tissue_compartments`.

    Returns
    -------
    ndarray, shape (m, n)
        Cumulative uptake per unit alveolar fraction. [L gas]

    Notes
    -----
    Each compartment fills as ``C (1 - exp(-G t / C))``.
    """
    t = np.asarray(t_min, dtype=float)[:, None, None]
    return (C[None] * (1.0 - np.exp(-G[None] * t / C[None]))).sum(axis=1)


__all__ = [
    "DEFAULT_UPTAKE_MODEL",
    "TISSUE_GROUPS",
    "UPTAKE_MODELS",
    "constant_alveolar_uptake_l",
    "lowe_cumulative_ml",
    "lowe_priming_ml",
    "lowe_uptake_rate_ml_min",
    "tissue_compartments",
]
