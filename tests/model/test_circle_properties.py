"""Property tests of the circle simulation over random plans (hypothesis)."""

from dataclasses import replace

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from model import compute_case
from model.circle import simulate_cases
from model.plan import CasePlan, Patient, Phase, Settings
from model.reference import DEFAULT_REFERENCE, VOLATILES

FAST = settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
floats = lambda lo, hi: st.floats(lo, hi, allow_nan=False, allow_infinity=False)  # noqa: E731


@st.composite
def phases(draw, agent):
    vmax = DEFAULT_REFERENCE.volatile(agent).vaporizer_max
    o2 = draw(floats(0.0, 8.0))
    air = draw(floats(0.0, 8.0))
    n2o = draw(st.one_of(st.just(0.0), floats(0.0, 6.0)))
    if o2 + air + n2o < 0.05:
        o2 = 0.05
    if draw(st.booleans()):
        control = dict(dial_pct=draw(floats(0.0, vmax)))
    else:
        control = dict(target_mac=draw(floats(0.0, 2.5)))
    return Phase("p", draw(floats(0.5, 180.0)), o2, air, n2o, **control)


@st.composite
def plans(draw):
    agent = draw(st.sampled_from(VOLATILES))
    ph = tuple(draw(phases(agent)) for _ in range(draw(st.integers(1, 3))))
    patient = Patient(draw(floats(3.0, 150.0)), draw(floats(1.0, 100.0)))
    s = replace(
        Settings(),
        uptake_model=draw(st.sampled_from(["compartment", "lowe"])),
        circle_volume_l=draw(floats(1.0, 10.0)),
        ratio_behaviour=draw(st.sampled_from(["cap_n2o", "raise_o2"])),
    )
    return CasePlan("random", agent, ph, patient, s)


@FAST
@given(plans())
def test_concentrations_stay_within_zero_and_one(plan):
    tc = compute_case(plan).timecourse
    for col in (
        "inspired_agent_pct",
        "end_tidal_agent_pct",
        "inspired_o2_pct",
        "end_tidal_o2_pct",
        "inspired_n2o_pct",
        "end_tidal_n2o_pct",
        "dial_pct",
    ):
        values = tc[col].to_numpy()
        assert np.all(values >= -1e-9) and np.all(values <= 100.0 + 1e-9), col
    assert np.all(np.diff(tc["liquid_agent_cumulative_ml"]) >= -1e-9)
    assert np.all(np.diff(tc["absorbent_used_cumulative_g"]) >= -1e-9)


@FAST
@given(plans())
def test_agent_o2_and_n2o_are_conserved(plan):
    t = compute_case(plan).totals
    assert t["conservation_error_rel"] < 1e-6
    assert t["agent_emitted_g"] <= t["agent_mass_g"] + 1e-9
    assert t["absorbent_g"] >= 0 and t["agent_vented_g"] >= -1e-9


@FAST
@given(
    agent=st.sampled_from(VOLATILES),
    target=floats(0.3, 1.5),
    fd_o2=floats(0.4, 1.0),
    minutes=floats(20.0, 180.0),
    weight=floats(10.0, 120.0),
    flows=st.lists(floats(0.3, 10.0), min_size=2, max_size=5),
)
def test_lower_flow_never_uses_more_liquid_for_the_same_target_and_never_less_absorbent(
    agent, target, fd_o2, minutes, weight, flows
):
    a = DEFAULT_REFERENCE.volatile(agent)
    f = np.sort(np.asarray(flows))
    o2 = f * (fd_o2 - 0.20946) / (1 - 0.20946)
    air = f - o2
    sim = simulate_cases(a, [[minutes]], o2[None, :], air[None, :], 0.0, None, [[target]], weight_kg=weight)
    liquid, absorbent = sim["liquid_ml"], sim["absorbent_g"]
    assert np.all(np.diff(liquid) >= -1e-9 * liquid[1:])
    assert np.all(np.diff(absorbent) <= 1e-9)


@FAST
@given(plans())
def test_phase_rows_sum_to_the_totals(plan):
    r = compute_case(plan)
    for total, column in (
        ("co2e_total_kg", "co2e_kg"),
        ("cost_total", "cost_total"),
        ("absorbent_g", "absorbent_g"),
        ("liquid_agent_ml", "liquid_agent_ml"),
    ):
        assert abs(r.totals[total] - r.phases[column].sum()) <= 1e-9 * max(1.0, abs(r.totals[total]))
