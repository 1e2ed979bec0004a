"""The uncertain physiology of the uptake model: each parameter's spread, its source, and seeded draws.

Every uncertain parameter of the patient and circle model (:mod:`model.uptake`,
:mod:`model.patient`, :mod:`model.circle`) is drawn as a multiplier of its central value,
log-normal with median 1: ``m = exp(s sigma z)``, ``z`` standard normal, ``sigma`` the
parameter's SD of ln (below, with its source) and ``s`` a common spread scale (1 = the
stated spreads, 0 = every multiplier exactly 1, the central model). The multipliers go to
:func:`model.circle.simulate_cases` as its ``physiology`` argument.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from types import MappingProxyType

import numpy as np

from model.reference import FROM_MEMORY, PUBLISHED

#: z of the 95th percentile of the standard normal distribution. [1]
Z95 = 1.6448536269514722


@dataclass(frozen=True)
class SpreadParameter:
    """One uncertain parameter: its key, a plain label, the SD of ln of its multiplier, and its source."""

    key: str
    label: str
    sigma: float
    source: str
    basis: str

    @property
    def p5_p95(self) -> tuple[float, float]:
        """The multiplier's P5 and P95 at the stated spread [1]."""
        return math.exp(-Z95 * self.sigma), math.exp(Z95 * self.sigma)


_ESPER_2015 = (
    "Blood/gas partition coefficients for isoflurane, sevoflurane, and desflurane in a clinically relevant "
    "patient population. Anesth Analg 2015;120:45-50 (120 patients: isoflurane 1.45 +/- 0.12, sevoflurane "
    "0.74 +/- 0.06, desflurane 0.57 +/- 0.04, mean +/- SD, an SD of 7-8 %; means 5-12 % above earlier "
    "published means)"
)
_BJA_1992 = (
    "Blood concentrations of sevoflurane and isoflurane on recovery from anaesthesia. Br J Anaesth "
    "1992;69:259-62 (sevoflurane 0.65, SD 0.05; isoflurane 1.36, SD 0.09)"
)

#: The uncertain parameters, in the order of the tables. ``sigma`` is the SD of ln of the
#: multiplier; its P5-P95 is ``exp(-/+1.645 sigma)``.
PHYSIOLOGY_SPREAD: tuple[SpreadParameter, ...] = (
    SpreadParameter(
        "blood_gas",
        "blood/gas partition coefficient of the agent",
        0.10,
        "SD of 7-8 % between patients and means 5-12 % apart between studies: "
        + _ESPER_2015
        + "; "
        + _BJA_1992
        + "; SD of ln 0.10 taken to hold both",
        PUBLISHED,
    ),
    SpreadParameter(
        "cardiac_output",
        "cardiac output (Brody's scaling)",
        0.20,
        "between patients under anaesthesia about +/-30 % at P5-P95 (from memory); cardiac index falls "
        "about 0.044 L/min/m2 a year of age from a mean of 3.5 (Eyeington CT et al., Anaesth Intensive "
        "Care 2018;46:290-6), a spread of this size over adult ages",
        FROM_MEMORY,
    ),
    SpreadParameter(
        "oxygen_consumption",
        "O2 consumption (Brody's scaling; CO2 production follows)",
        0.15,
        "between patients under anaesthesia about +/-25 % at P5-P95, from memory",
        FROM_MEMORY,
    ),
    SpreadParameter(
        "minute_ventilation",
        "minute ventilation",
        0.15,
        "ventilator settings and dead space between patients, from memory",
        FROM_MEMORY,
    ),
    SpreadParameter(
        "frc",
        "functional residual capacity",
        0.20,
        "about 1.7-3 L in anaesthetised adults, from memory",
        FROM_MEMORY,
    ),
    SpreadParameter(
        "circle_volume",
        "gas volume of the circle system",
        0.20,
        "workstation circle systems hold about 3-7 L (from memory)",
        FROM_MEMORY,
    ),
    SpreadParameter(
        "tissue_blood_vessel_rich",
        "tissue/blood coefficient, vessel-rich group",
        0.15,
        "spread of tissue/blood coefficients between tissue samples and studies, from memory",
        FROM_MEMORY,
    ),
    SpreadParameter(
        "tissue_blood_muscle",
        "tissue/blood coefficient, muscle",
        0.25,
        "spread of tissue/blood coefficients between tissue samples and studies, from memory",
        FROM_MEMORY,
    ),
    SpreadParameter(
        "tissue_blood_fat",
        "tissue/blood coefficient, fat",
        0.20,
        "spread of tissue/blood coefficients between tissue samples and studies, from memory",
        FROM_MEMORY,
    ),
    SpreadParameter(
        "volume_muscle",
        "muscle volume per kg",
        0.15,
        "lean mass share of body weight between adults, from memory",
        FROM_MEMORY,
    ),
    SpreadParameter(
        "volume_fat",
        "fat volume per kg",
        0.35,
        "body fat of adults about 12-40 % of weight, from memory",
        FROM_MEMORY,
    ),
    SpreadParameter(
        "flow_muscle",
        "muscle share of cardiac output",
        0.30,
        "muscle blood flow varies with temperature, depth and drugs, from memory",
        FROM_MEMORY,
    ),
    SpreadParameter(
        "flow_fat",
        "fat share of cardiac output",
        0.30,
        "fat blood flow per kg varies between adults, from memory",
        FROM_MEMORY,
    ),
)
PHYSIOLOGY_KEYS = tuple(p.key for p in PHYSIOLOGY_SPREAD)
SPREAD_BY_KEY = MappingProxyType({p.key: p for p in PHYSIOLOGY_SPREAD})


def check_physiology(physiology: Mapping | None) -> None:
    """Raise ValueError naming an unknown key of a physiology mapping."""
    if physiology is None:
        return
    unknown = [k for k in physiology if k not in SPREAD_BY_KEY]
    if unknown:
        raise ValueError(f"physiology keys must be among {PHYSIOLOGY_KEYS}, got {unknown[0]!r}")


def multiplier(physiology: Mapping | None, key: str):
    """The multiplier of ``key`` (1.0 where the mapping lacks it or is None) [1]."""
    if physiology is None or key not in physiology:
        return 1.0
    return np.asarray(physiology[key], dtype=float)


def draw_physiology(
    n: int, seed: int | Sequence[int], spread_scale=1.0, sigmas: Mapping[str, float] | None = None
) -> dict:
    """Seeded draws of every uncertain parameter's multiplier.

    Parameters
    ----------
    n : int
        Number of draws.
    seed : int or sequence of int
        Seed of the draws (numpy's ``default_rng``); each parameter's stream depends only on the seed and its place
        in :data:`PHYSIOLOGY_SPREAD`, so the same seed gives the same draws.
    spread_scale : float or mapping
        Multiplies every ``sigma`` (0 = no spread, the central model exactly); a mapping
        from key to scale scales parameters one by one (missing keys: 1). [1]
    sigmas : mapping, optional
        Replace the stated ``sigma`` of some parameters. [1]

    Returns
    -------
    dict
        Key -> multipliers, shape (n,), log-normal with median 1: ``exp(s sigma z)``. [1]

    References
    ----------
    .. [1] The source of each spread: :data:`PHYSIOLOGY_SPREAD`.
    """
    if n < 1:
        raise ValueError(f"n must be at least 1, got {n}")
    z = np.random.default_rng(seed).standard_normal((len(PHYSIOLOGY_SPREAD), n))
    out = {}
    for i, p in enumerate(PHYSIOLOGY_SPREAD):
        s = spread_scale.get(p.key, 1.0) if isinstance(spread_scale, Mapping) else spread_scale
        sigma = p.sigma if sigmas is None else sigmas.get(p.key, p.sigma)
        out[p.key] = np.exp(float(s) * float(sigma) * z[i])
    return out


__all__ = [
    "PHYSIOLOGY_KEYS",
    "PHYSIOLOGY_SPREAD",
    "SPREAD_BY_KEY",
    "SpreadParameter",
    "Z95",
    "check_physiology",
    "draw_physiology",
    "multiplier",
]
