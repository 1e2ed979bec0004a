"""Control limits and signal rules against hand calculations on small series with known signals.

No published worked example with numbers readable here was found; each expected value is
worked out by hand from the published formulas named beside it.
"""

import numpy as np
import pytest
from scipy.stats import binom

from model.base.errors import InputError
from model.trends.spc import anhoj_limits, anhoj_signals, p_limits, rule_signals, signal_sentences, xmr_limits

# A steady series with no pattern: hand-checked to have no run of 8, no trend of 6, no point
# beyond 2 sigma (mean 5.6, mean moving range 1.5, sigma 1.33).
STEADY = [5, 7, 6, 4, 6, 5, 7, 5, 6, 4, 6, 7, 5, 6, 5]


def test_xmr_limits_by_hand():
    # Montgomery, Introduction to SQC (individuals chart): mean 12, moving ranges 2, 1, 2, 1
    # -> mean MR 1.5, limits 12 -/+ 2.66 x 1.5 = 8.01 and 15.99; sigma 1.5 / 1.128.
    c = xmr_limits([10, 12, 11, 13, 14])
    assert c["centre"].iloc[0] == pytest.approx(12.0)
    assert c["ucl"].iloc[0] == pytest.approx(15.99)
    assert c["lcl"].iloc[0] == pytest.approx(8.01)
    assert c["sigma"].iloc[0] == pytest.approx(1.5 / 1.128)
    assert np.isnan(c["moving_range"].iloc[0])


def test_p_limits_with_varying_n_by_hand():
    # Montgomery (fraction nonconforming, variable n): p-bar = 15 / 150 = 0.1;
    # n = 50: 0.1 + 3 sqrt(0.09 / 50) = 0.227279, lower below 0 -> 0; n = 100: 0.19, 0.01.
    c = p_limits([5, 10], [50, 100])
    assert c["centre"].tolist() == pytest.approx([0.1, 0.1])
    assert c["ucl"].tolist() == pytest.approx([0.1 + 3 * np.sqrt(0.09 / 50), 0.19])
    assert c["lcl"].tolist() == pytest.approx([0.0, 0.01])


def test_no_false_alarm_on_a_steady_series():
    s = rule_signals(xmr_limits(STEADY))
    assert not s.to_numpy().any()
    assert not anhoj_signals(STEADY)["signal"]


def test_a_single_outlier_is_beyond_the_limit_and_nothing_else():
    # Hand: mean 81 / 12 = 6.75, mean moving range 37 / 11 = 3.36, upper limit 15.7 < 20;
    # 2 sigma line 12.7 (one point beyond it only), runs of 6 and 5 below the centre.
    x = [5, 6, 5, 6, 5, 6, 20, 6, 5, 6, 5, 6]
    c = xmr_limits(x)
    assert c["ucl"].iloc[0] == pytest.approx(6.75 + 2.66 * 37 / 11)
    s = rule_signals(c)
    assert s["beyond_limit"].tolist() == [i == 6 for i in range(12)]
    assert not s.drop(columns="beyond_limit").to_numpy().any()


def test_a_shift_of_eight_points_is_a_run():
    # Western Electric 1956 / Provost & Murray 2011: 8 in a row on one side of the centre.
    # Hand: centre 98.4 / 16 = 6.15; points 6 to 13 above it, 5 and 14 below.
    x = [5, 7, 5, 7, 5, 5, 6.5, 6.6, 6.5, 6.6, 6.5, 6.6, 6.5, 6.6, 5, 7]
    s = rule_signals(xmr_limits(x))
    assert np.flatnonzero(s["shift_8"]).tolist() == list(range(6, 14))
    # seven in a row is not a signal
    x7 = x[:6] + x[7:]
    assert not rule_signals(xmr_limits(x7))["shift_8"].any()


def test_a_trend_of_six_points():
    # Provost & Murray 2011: 6 points all going up.
    x = [6, 5, 6, 5, 6, 5, 5.2, 5.4, 5.6, 5.8, 6.0, 5, 6, 5, 6]
    s = rule_signals(xmr_limits(x))
    assert np.flatnonzero(s["trend_6"]).tolist() == [5, 6, 7, 8, 9, 10]
    five = [6, 5, 6, 5, 6, 5, 5.2, 5.4, 5.6, 5.8, 5, 6, 5, 6]
    assert not rule_signals(xmr_limits(five))["trend_6"].any()


def test_two_of_three_beyond_two_sigma():
    # Western Electric 1956: 2 of 3 beyond 2 sigma on one side. Hand: mean 208.4 / 20 =
    # 10.42; moving ranges 4 x 2.2 and 15 x 0.5, mean 16.3 / 19; sigma = that / 1.128 =
    # 0.7605; 2 sigma line 11.94 < 12.2 < upper limit 12.70.
    x = [10, 10.5] * 10
    x[9] = x[11] = 12.2
    c = xmr_limits(x)
    assert c["centre"].iloc[0] == pytest.approx(10.42)
    assert c["sigma"].iloc[0] == pytest.approx(16.3 / 19 / 1.128)
    s = rule_signals(c)
    assert np.flatnonzero(s["two_of_three"]).tolist() == [9, 11]
    assert not s.drop(columns="two_of_three").to_numpy().any()


def test_limits_recomputed_from_a_change_date():
    before = [10, 11, 10, 11, 10, 11]
    after = [5, 6, 5, 6, 5, 6]
    c = xmr_limits(before + after, change_index=6)
    assert c["centre"].tolist() == pytest.approx([10.5] * 6 + [5.5] * 6)
    # no moving range spans the change: mean MR 1 in each phase, limits 2.66 either side
    assert c["ucl"].tolist() == pytest.approx([13.16] * 6 + [8.16] * 6)
    assert np.isnan(c["moving_range"].iloc[6])
    one = rule_signals(xmr_limits(before + after))
    assert one.to_numpy().any()  # one set of limits over both sees the drop
    assert not rule_signals(c).to_numpy().any()
    with pytest.raises(InputError, match="change date"):
        xmr_limits(before, change_index=0)


@pytest.mark.parametrize(("n", "run", "crossings"), [(10, 6, 2), (20, 7, 6), (24, 8, 8)])
def test_anhoj_limits(n, run, crossings):
    # Anhøj & Olesen, PLoS One 2014;9(11):e113825, table of critical values (from memory);
    # the same formulas, round(log2(n) + 3) and qbinom(0.05, n - 1, 0.5), are in the qicharts2
    # vignette (CRAN); the binomial 5th percentile here from scipy.stats.
    assert anhoj_limits(n) == (run, crossings)
    assert crossings == binom.ppf(0.05, n - 1, 0.5)


def test_anhoj_signals_a_long_run():
    # median 3: the 3s are on it and left out; useful points 1 x 4 (below), 4 x 8 (above),
    # 1 (below): 13 useful, longest run 8 > round(log2(13) + 3) = 7, 2 crossings >= 3? no:
    # binomial 5th percentile of 12 trials at 0.5 is 3, so too few crossings too.
    r = anhoj_signals([1, 3, 1, 3, 1, 3, 1, 3, 4, 4, 4, 4, 4, 4, 4, 4, 1, 3])
    assert (r["useful"], r["longest_run"], r["run_limit"]) == (13, 8, 7)
    assert (r["crossings"], r["crossings_limit"]) == (2, 3)
    assert r["run_signal"] and r["crossing_signal"]


def test_signals_in_words_name_the_months_and_the_source():
    x = [5, 6, 5, 6, 5, 6, 20, 6, 5, 6, 5, 6]
    months = [f"2025-{m:02d}" for m in range(1, 13)]
    words = signal_sentences(months, rule_signals(xmr_limits(x)), "kg CO2e per case")
    assert words == [
        "kg CO2e per case: a point beyond a control limit, 2025-07 "
        "(Western Electric Statistical Quality Control Handbook, 1956)."
    ]
