"""Interrupted time series against statsmodels directly, and a known change recovered."""

import numpy as np
import pytest
import statsmodels.api as sm

from model.base.errors import InputError
from model.trends.its import design, interrupted_series, newey_west_lag


def test_equals_statsmodels_hac_fit():
    rng = np.random.default_rng(7)
    y = 50 + 0.2 * np.arange(30) + rng.normal(0, 2, 30)
    r = interrupted_series(y, 18)
    # statsmodels OLS with the HAC covariance, fitted here on the same design by hand
    t = np.arange(30.0)
    d = (t >= 18).astype(float)
    x = np.column_stack([np.ones(30), t, d, (t - 18) * d])
    np.testing.assert_array_equal(design(30, 18), x)
    fit = sm.OLS(y, x).fit(cov_type="HAC", cov_kwds={"maxlags": r.lags, "use_correction": True}, use_t=True)
    assert r.level_change == pytest.approx(fit.params[2], rel=1e-12)
    assert r.slope_change == pytest.approx(fit.params[3], rel=1e-12)
    assert r.level_ci == pytest.approx(tuple(fit.conf_int()[2]), rel=1e-12)
    assert r.slope_ci == pytest.approx(tuple(fit.conf_int()[3]), rel=1e-12)
    # the saving is a linear contrast of the parameters: statsmodels' own t_test of it
    post = t[18:] - 18
    contrast = np.array([[0, 0, -len(post), -post.sum()]])
    tt = fit.t_test(contrast)
    assert r.saved == pytest.approx(float(tt.effect[0]), rel=1e-12)
    assert r.saved_ci == pytest.approx(tuple(tt.conf_int()[0]), rel=1e-9)


def test_newey_west_lag_rule():
    # Newey & West 1994: floor(4 (n/100)^(2/9)); n = 100 -> 4, n = 24 -> 2, n = 36 -> 3.
    assert [newey_west_lag(n) for n in (100, 24, 36, 6)] == [4, 2, 3, 2]


def _invented(seed, n=48, k=24):
    """Invented series: a known drop of 8 and slope change of -0.6 a month at month 24.

    24 months at 40 kg/case rising 0.1 a month, then the change for 24 months; AR(1) noise,
    coefficient 0.4, sd 1.
    """
    rng = np.random.default_rng(seed)
    t = np.arange(n)
    e = np.zeros(n)
    for i in range(1, n):
        e[i] = 0.4 * e[i - 1] + rng.normal(0, 1.0)
    return 40 + 0.1 * t + np.where(t >= k, -8 - 0.6 * (t - k), 0) + e


TRUE_SAVED = sum(8 + 0.6 * i for i in range(24))


def test_a_known_change_is_recovered():
    r = interrupted_series(_invented(1), 24)
    assert r.level_ci[0] < -8 < r.level_ci[1]
    assert r.slope_ci[0] < -0.6 < r.slope_ci[1]
    assert r.saved_ci[0] < TRUE_SAVED < r.saved_ci[1]
    assert r.level_ci[1] < 0 and r.saved_ci[0] > 0  # the change is clear of zero
    t = np.arange(48)
    gap = np.where(t >= 24, -(r.level_change + r.slope_change * (t - 24)), 0)
    np.testing.assert_allclose(r.counterfactual - r.fitted, gap, atol=1e-9)
    assert "level change" in r.sentences("kg CO2e per case", "kg")[0]


def test_intervals_cover_the_known_change_in_most_invented_series():
    # 200 invented series. Newey-West intervals are known to run narrow on short
    # autocorrelated series (from memory: Kiefer & Vogelsang, Econometrica 2002); here a
    # nominal 95% interval held the truth in about 80% (measured, docs/trends.md; plain OLS
    # intervals did about as well on these series). 70% is asked: a floor against intervals
    # far too narrow.
    hits = np.zeros(3)
    for seed in range(200):
        r = interrupted_series(_invented(seed), 24)
        hits += [
            r.level_ci[0] < -8 < r.level_ci[1],
            r.slope_ci[0] < -0.6 < r.slope_ci[1],
            r.saved_ci[0] < TRUE_SAVED < r.saved_ci[1],
        ]
    assert (hits >= 140).all(), hits


def test_too_short_or_gappy_series_are_messages():
    with pytest.raises(InputError, match="change date"):
        interrupted_series(np.arange(10.0), 2)
    with pytest.raises(InputError, match="series"):
        interrupted_series([1, 2, np.nan, 4, 5, 6, 7, 8], 4)
