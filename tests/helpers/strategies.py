"""Hypothesis strategies of the physics property tests: agents, flows, dials, durations."""

from __future__ import annotations

from hypothesis import HealthCheck, settings
from hypothesis import strategies as st

from model.reference import AGENTS, VOLATILES

FAST = settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])


def floats(low, high, **kw):
    return st.floats(low, high, allow_nan=False, allow_infinity=False, **kw)


agents = st.sampled_from(VOLATILES).map(lambda n: AGENTS[n])


flows = floats(0.0, 20.0)


minutes = floats(0.1, 600.0)


dials = floats(0.0, 8.0)
