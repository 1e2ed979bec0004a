"""Age-adjusted MAC (Mapleson 1996) at worked points, and MAC multiples."""

import numpy as np
import pytest

from model.mac import MAPLESON_SLOPE, mac_at_age, mac_multiple
from model.reference import AGENTS


def test_slope_is_mapleson():
    # Source: Mapleson WW, Br J Anaesth 1996;76:179-85 (log10 MAC falls 0.00269 per year).
    assert MAPLESON_SLOPE == -0.00269


def test_age_40_gives_mac40():
    # Source: Mapleson 1996, MAC(age) = MAC40 * 10^(-0.00269 (age - 40)); at 40 the factor is 1.
    assert mac_at_age(2.1, 40.0) == pytest.approx(2.1)


def test_age_80_worked_point():
    # Source: Mapleson 1996. Worked by hand: -0.00269 * (80 - 40) = -0.1076;
    # 10^-0.1076 = e^(-0.1076 * 2.302585) = e^-0.247758 = 0.780563;
    # sevoflurane 2.1 % * 0.780563 = 1.63918 %.
    assert mac_at_age(2.1, 80.0) == pytest.approx(2.1 * 10 ** (-0.1076))
    assert mac_at_age(2.1, 80.0) == pytest.approx(1.63918, abs=1e-4)


def test_age_1_worked_point():
    # Source: Mapleson 1996. Worked by hand: -0.00269 * (1 - 40) = +0.10491;
    # 10^0.10491 = 1.27326; isoflurane 1.15 % * 1.27326 = 1.4642 %.
    assert mac_at_age(1.15, 1.0) == pytest.approx(1.4642, abs=1e-4)


def test_about_six_percent_less_per_decade():
    # Source: Mapleson 1996 ("about 6 % per decade"): 1 - 10^-0.0269 = 0.0601.
    assert mac_at_age(1.0, 50.0) == pytest.approx(1 - 0.0601, abs=5e-4)


def test_nitrous_oxide_at_age_60_worked_point():
    # Source: Mapleson 1996 (N2O MAC40 104 %). Worked by hand: 10^(-0.00269 * 20) = 10^-0.0538
    # = e^-0.123879 = 0.883487; 104 * 0.883487 = 91.883 %.
    assert mac_at_age(AGENTS["nitrous_oxide"].mac40, 60.0) == pytest.approx(91.883, abs=0.01)


def test_mac_at_age_vectorises():
    ages = np.array([20.0, 40.0, 60.0, 80.0])
    out = mac_at_age(6.0, ages)
    assert out.shape == (4,)
    assert np.all(np.diff(out) < 0)


def test_mac_fractions_add():
    # Source: Mapleson 1996 (MAC fractions of agent and N2O add). Worked by hand:
    # 1.05 % / 2.1 % + 52 % / 104 % = 0.5 + 0.5 = 1.0 MAC.
    assert mac_multiple(1.05, 2.1, 52.0, 104.0) == pytest.approx(1.0)
    assert mac_multiple(2.1, 2.1) == pytest.approx(1.0)
