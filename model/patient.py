"""Patient physiology for the low-flow model: Brody's scaling and the ventilation defaults."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: Brody's scaling as used by Lowe: VO2 = 10 x kg^0.75. [mL/min]
#: Source: Lowe HJ, Ernst EA. The Quantitative Practice of Anesthesia: Use of Closed
#: Circuit. Williams & Wilkins, 1981 (after Brody S, Bioenergetics and Growth, 1945).
BRODY_VO2_ML_MIN = 10.0
#: Cardiac output Q = 2 x kg^0.75. [dL/min]  Source: as above (Lowe and Ernst 1981).
BRODY_Q_DL_MIN = 2.0
#: Brody's exponent. [1]  Source: as above.
BRODY_EXPONENT = 0.75
#: Respiratory quotient VCO2/VO2. [1]  Source: Lowe and Ernst 1981 (VCO2 = 0.8 VO2).
RESPIRATORY_QUOTIENT = 0.8
#: Constant of the alveolar ventilation equation VA = 0.863 VCO2 / PaCO2 with VA in L/min
#: (BTPS), VCO2 in mL/min (STPD), PaCO2 in mmHg.
#: Source: West JB, Respiratory Physiology: The Essentials (alveolar ventilation equation).
ALVEOLAR_EQUATION_CONSTANT = 0.863
#: Target arterial CO2 of a ventilated patient. [mmHg]  Common practice, no source.
NORMOCAPNIA_MMHG = 40.0
#: Physiological dead space as a share of tidal volume. [1]
#: Source: West JB, Respiratory Physiology (normal VD/VT 0.2-0.35), from memory.
DEAD_SPACE_SHARE = 0.3
#: Functional residual capacity of an anaesthetised supine adult per kg. [L/kg]
#: Source: textbook value (about 2-2.5 L in a 70 kg adult under anaesthesia), from memory.
FRC_L_PER_KG = 0.03


@dataclass(frozen=True)
class PatientValues:
    """Resolved physiology of one patient or many (arrays of shape (n,) or scalars).

    Attributes are in base units: ``weight_kg`` [kg], ``age_years`` [year],
    ``cardiac_output_l_min`` [L/min], ``vo2_l_min``, ``vco2_l_min`` [L/min],
    ``minute_ventilation_l_min``, ``alveolar_ventilation_l_min`` [L/min], ``frc_l`` [L].
    """

    weight_kg: np.ndarray
    age_years: np.ndarray
    cardiac_output_l_min: np.ndarray
    vo2_l_min: np.ndarray
    vco2_l_min: np.ndarray
    minute_ventilation_l_min: np.ndarray
    alveolar_ventilation_l_min: np.ndarray
    frc_l: np.ndarray


def brody_vo2_ml_min(weight_kg):
    """O2 consumption by Brody's scaling.

    Parameters
    ----------
    weight_kg : array_like
        Body weight. [kg]

    Returns
    -------
    ndarray
        O2 consumption. [mL/min]  ``VO2 = 10 kg^0.75`` (242 mL/min at 70 kg).

    References
    ----------
    .. [1] Lowe HJ, Ernst EA. The Quantitative Practice of Anesthesia: Use of Closed
       Circuit. 1981.
    """
    return BRODY_VO2_ML_MIN * np.asarray(weight_kg, dtype=float) ** BRODY_EXPONENT


def brody_cardiac_output_l_min(weight_kg):
    """Cardiac output by Brody's scaling.

    Parameters
    ----------
    weight_kg : array_like
        Body weight. [kg]

    Returns
    -------
    ndarray
        Cardiac output. [L/min]  ``Q = 2 kg^0.75 dL/min`` (4.84 L/min at 70 kg).

    References
    ----------
    .. [1] Lowe HJ, Ernst EA. The Quantitative Practice of Anesthesia: Use of Closed
       Circuit. 1981.
    """
    return BRODY_Q_DL_MIN * np.asarray(weight_kg, dtype=float) ** BRODY_EXPONENT / 10.0


def default_minute_ventilation_l_min(vco2_l_min, paco2_mmhg=NORMOCAPNIA_MMHG, dead_space_share=DEAD_SPACE_SHARE):
    """Minute ventilation that keeps a patient normocapnic.

    Parameters
    ----------
    vco2_l_min : array_like
        CO2 production. [L/min]
    paco2_mmhg : float
        Arterial CO2 aimed at. [mmHg]
    dead_space_share : float
        Dead space as a share of tidal volume. [1]

    Returns
    -------
    ndarray
        Minute ventilation. [L/min]  About 6 L/min at 70 kg.

    Notes
    -----
    Alveolar ventilation ``VA = 0.863 VCO2[mL/min] / PaCO2[mmHg]``, then
    ``VE = VA / (1 - VD/VT)``.

    References
    ----------
    .. [1] West JB. Respiratory Physiology: The Essentials (alveolar ventilation equation).
    """
    va = ALVEOLAR_EQUATION_CONSTANT * np.asarray(vco2_l_min, dtype=float) * 1000.0 / paco2_mmhg
    return va / (1.0 - dead_space_share)


def resolve_patient(
    weight_kg=70.0, age_years=40.0, cardiac_output_l_min=None, vo2_ml_min=None, minute_ventilation_l_min=None
) -> PatientValues:
    """Fill a patient's missing physiology by Brody's scaling (vectorised).

    Parameters
    ----------
    weight_kg, age_years : array_like
        Body weight [kg] and age [year].
    cardiac_output_l_min, vo2_ml_min, minute_ventilation_l_min : array_like or None
        Overrides [L/min], [mL/min], [L/min]; None (or NaN entries) take the defaults.

    Returns
    -------
    PatientValues
        With ``VCO2 = 0.8 VO2`` and alveolar ventilation ``(1 - VD/VT) VE``.

    References
    ----------
    .. [1] Lowe HJ, Ernst EA. The Quantitative Practice of Anesthesia: Use of Closed
       Circuit. 1981 (Brody's scaling, VCO2 = 0.8 VO2).
    """
    w = np.asarray(weight_kg, dtype=float)
    age = np.asarray(age_years, dtype=float)

    def pick(value, default):
        if value is None:
            return np.asarray(default, dtype=float)
        v = np.asarray(value, dtype=float)
        return np.where(np.isnan(v), default, v)

    q = pick(cardiac_output_l_min, brody_cardiac_output_l_min(w))
    vo2 = pick(vo2_ml_min, brody_vo2_ml_min(w)) / 1000.0
    vco2 = RESPIRATORY_QUOTIENT * vo2
    ve = pick(minute_ventilation_l_min, default_minute_ventilation_l_min(vco2))
    return PatientValues(w, age, q, vo2, vco2, ve, ve * (1.0 - DEAD_SPACE_SHARE), FRC_L_PER_KG * w)
