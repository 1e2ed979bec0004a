"""Property tests (hypothesis) of the foundation: each test name states its invariant."""

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from model.case import phase_consumption
from model.freshgas import RATIO_BEHAVIOURS, apply_ratio_limit
from tests.helpers.strategies import FAST, agents, dials, floats, flows, minutes

# Flows are 0 or at least 1e-9 L/min: a subnormal O2 flow (5e-324) times the allowed ratio
# rounds back to itself, which no flowmeter can set and which says nothing about the limit.
meter_flows = st.one_of(st.just(0.0), floats(1e-9, 20.0))


@settings(max_examples=300, deadline=None)
@given(
    st.lists(st.tuples(meter_flows, meter_flows), min_size=1, max_size=30),
    floats(0.01, 1.0),
    floats(0.0, 5.0),
    st.sampled_from(RATIO_BEHAVIOURS),
)
def test_ratio_limit_never_delivers_o2_share_under_minimum(requests, share, cutoff, behaviour):
    o2_req, n2o_req = (np.array(c) for c in zip(*requests, strict=True))
    o2, n2o, altered = apply_ratio_limit(o2_req, n2o_req, share, cutoff, behaviour)
    total = o2 + n2o
    delivered_share = np.divide(o2, total, out=np.ones_like(total), where=total > 0)
    assert np.all(delivered_share >= share * (1 - 1e-12))
    # the cut-off is honoured: no N2O while O2 is under it
    assert np.all(n2o[o2 < cutoff] == 0.0)
    # the limit only ever lowers N2O or raises O2, and says when it acted
    assert np.all(n2o <= n2o_req) and np.all(o2 >= o2_req)
    # (changes under 1e-12 L/min are rounding, not an alteration worth a note)
    changed = (np.abs(o2 - o2_req) > 1e-12) | (np.abs(n2o - n2o_req) > 1e-12)
    assert np.array_equal(changed, altered)
    if behaviour == "cap_n2o":
        assert np.array_equal(o2, o2_req)


@FAST
@given(
    agents,
    st.lists(st.tuples(flows, flows, flows, dials, minutes), min_size=1, max_size=20),
    floats(0.05, 1.0),
    st.sampled_from(RATIO_BEHAVIOURS),
)
def test_phase_rows_never_deliver_o2_share_under_minimum(agent, rows, share, behaviour):
    o2, air, n2o, dial, t = (np.array(c) for c in zip(*rows, strict=True))
    c = phase_consumption(t, o2, air, n2o, dial, agent, min_o2_share=share, ratio_behaviour=behaviour)
    total = c["oxygen_l_min"] + c["nitrous_oxide_l_min"]
    mixed = total > 0
    assert np.all(c["oxygen_l_min"][mixed] / total[mixed] >= share * (1 - 1e-12))
    assert np.all(c["nitrous_oxide_l_min"][c["oxygen_l_min"] < 0.2] == 0.0)
