"""Patient physiology: Brody's scaling and the ventilation defaults at worked points."""

import numpy as np
import pytest

from model.patient import (
    brody_cardiac_output_l_min,
    brody_vo2_ml_min,
    default_minute_ventilation_l_min,
    resolve_patient,
)
from model.plan import Patient


def patient_values(patient):
    """Resolve a :class:`model.plan.Patient` (its None fields take Brody's defaults)."""
    return resolve_patient(
        patient.weight_kg,
        patient.age_years,
        patient.cardiac_output_l_min,
        patient.vo2_ml_min,
        patient.minute_ventilation_l_min,
    )


def test_brody_vo2_at_70_kg():
    # Source: Lowe HJ, Ernst EA, The Quantitative Practice of Anesthesia, 1981: VO2 = 10 kg^0.75 mL/min
    assert brody_vo2_ml_min(70.0) == pytest.approx(10 * 70**0.75, rel=1e-12)
    # Source: same; the worked value is about 242 mL/min for 70 kg
    assert brody_vo2_ml_min(70.0) == pytest.approx(242.0, abs=0.5)


def test_brody_cardiac_output_at_70_kg():
    # Source: Lowe and Ernst 1981: Q = 2 kg^0.75 dL/min, 48.4 dL/min for 70 kg
    assert brody_cardiac_output_l_min(70.0) == pytest.approx(4.84, abs=0.01)


def test_brody_scaling_is_vectorised_and_grows_as_three_quarter_power():
    w = np.array([10.0, 70.0, 160.0])
    vo2 = brody_vo2_ml_min(w)
    # Source: Lowe and Ernst 1981 (Brody's exponent 0.75)
    assert vo2[2] / vo2[1] == pytest.approx((160 / 70) ** 0.75, rel=1e-12)


def test_default_minute_ventilation_is_about_6_l_min_for_70_kg():
    pv = resolve_patient(70.0, 40.0)
    # Source: Lowe and Ernst 1981 (VCO2 = 0.8 VO2)
    assert pv.vco2_l_min == pytest.approx(0.8 * pv.vo2_l_min)
    # Source: West JB, Respiratory Physiology (VA = 0.863 VCO2/PaCO2); hand-worked:
    # 0.863 * 193.6 / 40 = 4.18 L/min alveolar, / 0.7 = 5.97 L/min
    assert pv.minute_ventilation_l_min == pytest.approx(5.97, abs=0.02)
    assert default_minute_ventilation_l_min(0.1936) == pytest.approx(5.97, abs=0.02)


def test_overrides_replace_defaults_and_nan_keeps_the_default():
    pv = resolve_patient(
        [70.0, 70.0],
        40.0,
        cardiac_output_l_min=[6.0, np.nan],
        vo2_ml_min=[300.0, np.nan],
        minute_ventilation_l_min=[8.0, np.nan],
    )
    assert pv.cardiac_output_l_min.tolist() == pytest.approx([6.0, 4.84], abs=0.01)
    assert pv.vo2_l_min.tolist() == pytest.approx([0.300, 0.242], abs=0.001)
    assert pv.minute_ventilation_l_min[0] == 8.0
    assert pv.alveolar_ventilation_l_min[0] == pytest.approx(8.0 * 0.7)


def test_patient_values_from_a_plan_patient():
    pv = patient_values(Patient(weight_kg=50.0, age_years=30.0, vo2_ml_min=200.0))
    assert float(pv.vo2_l_min) == pytest.approx(0.2)
    assert float(pv.cardiac_output_l_min) == pytest.approx(0.2 * 50**0.75)
