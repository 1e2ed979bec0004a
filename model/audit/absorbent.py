"""CO2 absorbent from case records: the patient and absorbent the audit assumes, and the estimate.

Records carry flows, not the patient, so the CO2 reaching the absorber is an estimate with
the case plans' own formula (:func:`model.circle.rebreathed_share`, as in
:func:`model.circle.simulate_cases`): each sample sends ``VCO2 x max(1 - FGF / VE, 0)``
litres a minute into the absorber, and soda lime takes up ``capacity`` litres of CO2 per kg.
The patient is the case plans' default adult unless the settings file's ``[absorbent]``
table says otherwise (``model.reference.ABSORBENT_FIELDS``).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from model.circle import ABSORBENT_CAPACITY_L_PER_KG
from model.patient import RESPIRATORY_QUOTIENT, resolve_patient
from model.plan import Patient
from model.reference import Reference


@dataclass(frozen=True)
class AbsorbentAssumptions:
    """The values behind the record audit's absorbent estimate, each with where it came from."""

    #: Patient weight behind VCO2. [kg]
    weight_kg: float
    #: CO2 production. [L/min]
    vco2_l_min: float
    #: Minute ventilation. [L/min]
    minute_ventilation_l_min: float
    #: CO2 taken up per kg of absorbent. [L/kg]
    capacity_l_per_kg: float
    #: Field -> where its value came from.
    sources: dict

    def as_dict(self) -> dict:
        """Plain-dict form with units in the key names (for JSON and the audit's settings)."""
        return {
            "weight_kg": self.weight_kg,
            "vco2_ml_min": self.vco2_l_min * 1000.0,
            "minute_ventilation_l_min": self.minute_ventilation_l_min,
            "capacity_l_per_kg": self.capacity_l_per_kg,
            "sources": dict(self.sources),
        }


def absorbent_assumptions(reference: Reference) -> AbsorbentAssumptions:
    """Resolve the record audit's patient and absorbent: user values, else the case plans' defaults.

    Parameters
    ----------
    reference : Reference
        Its ``absorbent`` mapping holds the settings file's ``[absorbent]`` values.

    Returns
    -------
    AbsorbentAssumptions
        With ``VCO2 = 0.8 x 10 x kg^0.75`` mL/min (Brody's scaling, as the case plans) unless
        given, minute ventilation from VCO2 at normocapnia (alveolar ventilation equation)
        unless given, and the plans' absorbent capacity unless given.

    References
    ----------
    .. [1] Lowe HJ, Ernst EA. The Quantitative Practice of Anesthesia: Use of Closed
       Circuit. 1981 (Brody's scaling, VCO2 = 0.8 VO2).
    .. [2] West JB. Respiratory Physiology: The Essentials (alveolar ventilation equation).
    """
    user = reference.absorbent
    sources = {}

    def given(name):
        v = user.get(name)
        if v is not None and v.value is not None:
            sources[name] = v.source
            return float(v.value)
        return None

    weight = given("weight_kg")
    if weight is None:
        weight = Patient().weight_kg
        sources["weight_kg"] = "the case plans' default adult (common practice, no source)"
    vco2_ml = given("vco2_ml_min")
    ve = given("minute_ventilation_l_min")
    # resolve_patient takes VO2 and sets VCO2 = RQ x VO2, so a given VCO2 goes in as VCO2 / RQ.
    vo2_ml = None if vco2_ml is None else vco2_ml / RESPIRATORY_QUOTIENT
    pat = resolve_patient(weight, Patient().age_years, None, vo2_ml, ve)
    if vco2_ml is None:
        sources["vco2_ml_min"] = (
            "Brody's scaling, VCO2 = 0.8 x 10 x kg^0.75 mL/min (Lowe and Ernst 1981), as in case plans"
        )
    if ve is None:
        sources["minute_ventilation_l_min"] = (
            "from VCO2 at normocapnia, alveolar ventilation equation (West, Respiratory Physiology), as in case plans"
        )
    capacity = given("capacity_l_per_kg")
    if capacity is None:
        capacity = ABSORBENT_CAPACITY_L_PER_KG
        sources["capacity_l_per_kg"] = "10-20 L per 100 g soda lime in practice (from memory), as in case plans"
    return AbsorbentAssumptions(
        float(weight), float(pat.vco2_l_min), float(pat.minute_ventilation_l_min), float(capacity), sources
    )


def absorbent_from_rebreathed(rebreathed_min, assumptions: AbsorbentAssumptions):
    """CO2 absorbed and absorbent used from the rebreathed minutes of each case.

    Parameters
    ----------
    rebreathed_min : array_like
        ``sum(rebreathed_share(FGF_i, VE) x dt_i)`` over a case's samples. [min]
    assumptions : AbsorbentAssumptions

    Returns
    -------
    co2_absorbed_l : ndarray
        CO2 into the absorber. [L]
    absorbent_g : ndarray
        Absorbent used. [g]  ``CO2 / capacity x 1000``, as the case plans.
    """
    co2 = np.asarray(rebreathed_min, dtype=float) * assumptions.vco2_l_min
    return co2, co2 / assumptions.capacity_l_per_kg * 1000.0
