"""Property tests of liquid agent use (hypothesis): linear in time and dial, additive over time, monotonic in flow."""

import pytest
from hypothesis import given

from model.vapour import liquid_used_ml
from tests.helpers.strategies import FAST, agents, dials, floats, flows, minutes

positive_flows = floats(0.01, 20.0)


temperatures = floats(0.0, 45.0)


@FAST
@given(agents, positive_flows, dials, minutes, floats(0.01, 100.0), temperatures)
def test_liquid_use_is_linear_in_time(agent, fgf, dial, t, k, temp):
    one = liquid_used_ml(fgf, dial, t, agent, temp)
    assert liquid_used_ml(fgf, dial, k * t, agent, temp) == pytest.approx(k * one, rel=1e-9, abs=1e-12)


@FAST
@given(agents, positive_flows, dials, minutes, minutes)
def test_liquid_use_adds_over_consecutive_periods(agent, fgf, dial, t1, t2):
    whole = liquid_used_ml(fgf, dial, t1 + t2, agent)
    parts = liquid_used_ml(fgf, dial, t1, agent) + liquid_used_ml(fgf, dial, t2, agent)
    assert whole == pytest.approx(parts, rel=1e-9, abs=1e-12)


@FAST
@given(agents, positive_flows, dials, dials, minutes)
def test_liquid_use_is_linear_in_dial(agent, fgf, d1, d2, t):
    # additive and homogeneous in the dial setting
    both = liquid_used_ml(fgf, d1 + d2, t, agent)
    assert both == pytest.approx(
        liquid_used_ml(fgf, d1, t, agent) + liquid_used_ml(fgf, d2, t, agent), rel=1e-9, abs=1e-12
    )
    assert liquid_used_ml(fgf, 0.0, t, agent) == 0.0


@FAST
@given(agents, flows, flows, dials, minutes)
def test_liquid_use_is_monotonic_in_flow(agent, f1, f2, dial, t):
    low, high = sorted((f1, f2))
    assert liquid_used_ml(low, dial, t, agent) <= liquid_used_ml(high, dial, t, agent)
