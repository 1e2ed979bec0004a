"""Fresh gas composition, the O2/N2O ratio limit and flow bands, at worked points."""

import numpy as np
import pytest

from model.freshgas import FLOW_BAND_NAMES, apply_ratio_limit, delivered_fractions, flow_band


def test_fractions_of_oxygen_and_air():
    # Source: US Standard Atmosphere 1976 (dry air 20.946 % O2); worked by hand:
    # 1 L/min O2 + 1 L/min air: (1 + 0.20946) / 2 = 0.60473.
    fgf, fd_o2, fd_n2o = delivered_fractions(1.0, 1.0, 0.0)
    assert fgf == pytest.approx(2.0)
    assert fd_o2 == pytest.approx(0.60473)
    assert fd_n2o == 0.0


def test_fractions_of_oxygen_and_nitrous_oxide():
    # Worked by hand: 1 L/min O2 + 2 L/min N2O gives a third O2, two thirds N2O.
    _, fd_o2, fd_n2o = delivered_fractions(1.0, 0.0, 2.0)
    assert fd_o2 == pytest.approx(1 / 3)
    assert fd_n2o == pytest.approx(2 / 3)


def test_air_alone_delivers_room_air_oxygen():
    # Source: US Standard Atmosphere 1976 (20.946 % O2).
    _, fd_o2, _ = delivered_fractions(0.0, 3.0, 0.0)
    assert fd_o2 == pytest.approx(0.20946)


def test_zero_flow_gives_zero_fractions_without_warnings():
    with np.errstate(all="raise"):
        fgf, fd_o2, fd_n2o = delivered_fractions([0.0, 1.0], [0.0, 0.0], [0.0, 1.0])
    assert fgf.tolist() == [0.0, 2.0]
    assert fd_o2.tolist() == [0.0, 0.5]
    assert fd_n2o.tolist() == [0.0, 0.5]


def test_cap_n2o_limits_n2o_to_three_times_o2():
    # Source: common practice, no source (25 % O2 minimum: N2O at most 3 x O2).
    o2, n2o, altered = apply_ratio_limit(1.0, 4.0)
    assert o2 == pytest.approx(1.0)
    assert n2o == pytest.approx(3.0)
    assert bool(altered)


def test_raise_o2_lifts_o2_to_a_third_of_n2o():
    # Source: common practice, no source (25 % O2 minimum: O2 at least N2O / 3).
    o2, n2o, altered = apply_ratio_limit(1.0, 4.0, behaviour="raise_o2")
    assert o2 == pytest.approx(4.0 / 3.0)
    assert n2o == pytest.approx(4.0)
    assert bool(altered)


def test_request_inside_the_limit_is_not_altered():
    o2, n2o, altered = apply_ratio_limit([1.0, 0.5, 2.0], [2.0, 1.5, 0.0])
    assert o2.tolist() == [1.0, 0.5, 2.0]
    assert n2o.tolist() == [2.0, 1.5, 0.0]
    assert not altered.any()


def test_n2o_stops_under_the_cutoff_o2_flow():
    # Source: common practice, no source (N2O cut off when O2 falls under about 0.2 L/min).
    o2, n2o, altered = apply_ratio_limit([0.1, 0.2], [0.2, 0.2])
    assert n2o.tolist() == [0.0, 0.2]
    assert altered.tolist() == [True, False]


def test_custom_share_and_cutoff():
    # A 30 % minimum: N2O at most 0.7 / 0.3 x O2.
    o2, n2o, _ = apply_ratio_limit(0.6, 5.0, min_o2_share=0.3, min_o2_flow_l_min=0.5)
    assert n2o == pytest.approx(1.4)
    o2, n2o, _ = apply_ratio_limit(0.4, 0.5, min_o2_share=0.3, min_o2_flow_l_min=0.5)
    assert n2o == 0.0


def test_full_o2_share_allows_no_n2o_in_both_behaviours():
    for behaviour in ("cap_n2o", "raise_o2"):
        o2, n2o, altered = apply_ratio_limit(1.0, 2.0, min_o2_share=1.0, behaviour=behaviour)
        assert o2 == pytest.approx(1.0) and n2o == 0.0 and bool(altered)


@pytest.mark.parametrize(
    "kwargs, match",
    [
        ({"behaviour": "shout"}, "cap_n2o"),
        ({"min_o2_share": 0.0}, "min_o2_share"),
        ({"min_o2_share": 1.5}, "min_o2_share"),
    ],
)
def test_bad_ratio_arguments_name_what_is_allowed(kwargs, match):
    with pytest.raises(ValueError, match=match):
        apply_ratio_limit(1.0, 1.0, **kwargs)


@pytest.mark.parametrize(
    "fgf, band",
    [
        (0.2, "metabolic"),
        (0.25, "metabolic"),
        (0.3, "minimal"),
        (0.5, "minimal"),
        (0.75, "low"),
        (1.0, "low"),
        (1.5, "medium"),
        (2.0, "medium"),
        (3.0, "high"),
        (4.0, "high"),
        (6.0, "very high"),
    ],
)
def test_flow_bands_follow_baker(fgf, band):
    # Source: Baker AB, Anaesth Intensive Care 1994;22:341-2 (metabolic ~0.25, minimal
    # 0.25-0.5, low 0.5-1, medium 1-2, high 2-4, very high above 4 L/min).
    assert flow_band(fgf) == band


def test_flow_band_vectorises_and_is_ordered():
    flows = np.linspace(0.05, 10.0, 200)
    bands = flow_band(flows)
    assert bands.shape == (200,)
    index = [FLOW_BAND_NAMES.index(b) for b in bands]
    assert index == sorted(index)
    assert set(bands) == set(FLOW_BAND_NAMES)
