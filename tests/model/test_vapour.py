"""Liquid and vapour: ideal-gas molar volume, vapour per mL, Dion's formula, rule of thumb."""

import numpy as np
import pytest
import scipy.constants

from model.base.units import registry
from model.reference import AGENTS
from model.vapour import (
    liquid_from_vapour,
    liquid_used_ml,
    liquid_used_series_ml,
    molar_volume_l,
    rule_of_thumb_ml_per_hour,
    vapour_per_ml_liquid,
)

SEVO, DES, ISO, HAL = (AGENTS[n] for n in ("sevoflurane", "desflurane", "isoflurane", "halothane"))


def test_molar_volume_at_0c_matches_codata():
    # Source: CODATA 2018 via scipy.constants, "molar volume of ideal gas (273.15 K, 101.325 kPa)".
    expected = scipy.constants.physical_constants["molar volume of ideal gas (273.15 K, 101.325 kPa)"][0]
    assert molar_volume_l(0.0, 101.325) == pytest.approx(expected * 1000.0, rel=1e-9)


def test_molar_volume_at_20c_matches_textbook_and_pint():
    # Source: textbook value, docs/methods.md, Vapour from liquid (24.055 L/mol at 20 °C, 101.325 kPa).
    assert molar_volume_l(20.0) == pytest.approx(24.055, abs=1e-3)
    # Source: pint's own constants (molar_gas_constant) as an independent ideal-gas check.
    ureg = registry()
    vm = ureg.molar_gas_constant * ureg.Quantity(20.0, "degC").to("K") / ureg.Quantity(101.325, "kPa")
    assert molar_volume_l(20.0) == pytest.approx(vm.to("L/mol").magnitude, rel=1e-9)


@pytest.mark.parametrize("agent, expected", [(SEVO, 183), (DES, 210), (ISO, 195), (HAL, 227)])
def test_vapour_per_ml_at_20c_matches_textbook(agent, expected):
    # Source: textbook values, from memory, docs/methods.md, Vapour from liquid (about 183, 210, 195
    # and 227 mL vapour per mL liquid at 20 °C).
    assert vapour_per_ml_liquid(agent, 20.0) == pytest.approx(expected, rel=0.005)


def test_vapour_per_ml_scales_with_absolute_temperature_and_inverse_pressure():
    # Source: ideal gas law (V proportional to T / P).
    v20 = vapour_per_ml_liquid(SEVO, 20.0)
    assert vapour_per_ml_liquid(SEVO, 30.0) == pytest.approx(v20 * 303.15 / 293.15)
    assert vapour_per_ml_liquid(SEVO, 20.0, 80.0) == pytest.approx(v20 * 101.325 / 80.0)


def test_vapour_per_ml_vectorises_over_temperatures():
    temps = np.array([15.0, 20.0, 25.0])
    out = vapour_per_ml_liquid(ISO, temps)
    assert out.shape == (3,)
    assert np.all(np.diff(out) > 0)


def test_liquid_from_vapour_inverts_vapour_per_ml():
    assert liquid_from_vapour(vapour_per_ml_liquid(DES, 22.0) * 7.5, DES, 22.0) == pytest.approx(7.5)


def test_dion_sevoflurane_hand_worked():
    # Source: Dion P, Can J Anaesth 1992;39:633-4: mL = FGF * dial * t * M / (2412 * rho),
    # 2412 = 100 x molar volume at 21 °C. Worked by hand for 2 L/min, 2 %, 60 min:
    #   2 * 2 * 60 = 240;  240 * 200.05 = 48012;  2412 * 1.52 = 3666.24;
    #   48012 / 3666.24 = 13.0957 mL.
    # Our molar volume at 21 °C is 24.137 L/mol (CODATA R) against Dion's rounded 24.12,
    # a 0.07 % difference, so the check allows 0.1 %.
    assert liquid_used_ml(2.0, 2.0, 60.0, SEVO, 21.0) == pytest.approx(13.0957, rel=1e-3)


def test_dion_desflurane_hand_worked():
    # Source: Dion P, Can J Anaesth 1992;39:633-4. Worked by hand for 1 L/min, 6 %, 60 min:
    #   1 * 6 * 60 = 360;  360 * 168.04 = 60494.4;  2412 * 1.465 = 3533.58;
    #   60494.4 / 3533.58 = 17.120 mL.
    assert liquid_used_ml(1.0, 6.0, 60.0, DES, 21.0) == pytest.approx(17.120, rel=1e-3)


def test_dion_isoflurane_hand_worked_at_20c():
    # Source: Dion's formula generalised with the molar volume at 20 °C (24.055 L/mol,
    # docs/methods.md, Dion's formula). Worked by hand for 3 L/min, 1.5 %, 90 min:
    #   vapour = 3000 mL/min * 0.015 * 90 min = 4050 mL;
    #   vapour per mL = 1.496 / 184.49 * 24055 = 195.06;  4050 / 195.06 = 20.763 mL.
    assert liquid_used_ml(3.0, 1.5, 90.0, ISO, 20.0) == pytest.approx(20.763, rel=1e-3)


def test_dion_generalised_to_temperature():
    # Source: ideal gas law: the same vapour volume is fewer moles, so less liquid, when warmer.
    at_20 = liquid_used_ml(2.0, 2.0, 60.0, SEVO, 20.0)
    at_21 = liquid_used_ml(2.0, 2.0, 60.0, SEVO, 21.0)
    assert at_20 == pytest.approx(at_21 * 294.15 / 293.15)


@pytest.mark.parametrize("agent", [SEVO, ISO], ids=["sevoflurane", "isoflurane"])
@pytest.mark.parametrize("temperature_c", [20.0, 21.0])
@pytest.mark.parametrize("fgf, dial", [(0.5, 3.0), (1.0, 2.0), (2.0, 1.0), (4.0, 2.5), (6.0, 1.2)])
def test_rule_of_thumb_within_ten_percent(agent, temperature_c, fgf, dial):
    rule = rule_of_thumb_ml_per_hour(fgf, dial)
    assert rule == pytest.approx(3.0 * dial * fgf)
    # Source: common practice, no source: "mL liquid per hour ≈ 3 x dial % x FGF (L/min)".
    assert liquid_used_ml(fgf, dial, 60.0, agent, temperature_c) == pytest.approx(rule, rel=0.10)


def test_series_of_constant_samples_equals_one_phase():
    t = np.arange(0.0, 61.0)  # 61 samples: 60 one-minute steps
    fgf = np.full(t.shape, 1.5)
    dial = np.full(t.shape, 2.5)
    # Source: Dion's formula (a constant setting integrates to the phase value).
    assert liquid_used_series_ml(t, fgf, dial, SEVO) == pytest.approx(liquid_used_ml(1.5, 2.5, 60.0, SEVO))


def test_series_uses_left_step_rule_and_uneven_steps():
    t = np.array([0.0, 10.0, 15.0, 45.0])
    fgf = np.array([6.0, 2.0, 0.5, 99.0])  # the last sample closes the series
    dial = np.array([6.0, 3.0, 2.0, 99.0])
    expected = (
        liquid_used_ml(6.0, 6.0, 10.0, SEVO)
        + liquid_used_ml(2.0, 3.0, 5.0, SEVO)
        + liquid_used_ml(0.5, 2.0, 30.0, SEVO)
    )
    assert liquid_used_series_ml(t, fgf, dial, SEVO) == pytest.approx(float(expected))


def test_series_matches_piecewise_phases_sampled_each_minute():
    # The same case as phases and as a per-minute record gives the same liquid.
    phases = [(10, 6.0, 6.0), (75, 0.5, 3.0), (10, 6.0, 0.0)]
    minutes = np.concatenate([np.full(m, 0.0) for m, _, _ in phases])
    fgf = np.concatenate([np.full(m, f) for m, f, _ in phases] + [[0.0]])
    dial = np.concatenate([np.full(m, d) for m, _, d in phases] + [[0.0]])
    t = np.arange(minutes.size + 1, dtype=float)
    by_phase = sum(float(liquid_used_ml(f, d, m, SEVO)) for m, f, d in phases)
    assert liquid_used_series_ml(t, fgf, dial, SEVO) == pytest.approx(by_phase)


def test_liquid_used_broadcasts_over_rows():
    fgf = np.array([0.5, 1.0, 2.0])
    out = liquid_used_ml(fgf, 2.0, 60.0, SEVO)
    assert out.shape == (3,)
    assert out == pytest.approx(fgf * liquid_used_ml(1.0, 2.0, 60.0, SEVO))
