"""Property tests of plan files (hypothesis): any plan written as TOML reads back the same."""

from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

from model.freshgas import RATIO_BEHAVIOURS
from model.io.plans import MIN_O2_SHARE, MIN_TOTAL_FLOW_L_MIN, parse_plan_text, plan_to_toml
from model.plan import CasePlan, Patient, Phase, Settings
from model.reference import AGENTS, GWP_SOURCES, VOLATILES
from tests.helpers.strategies import floats, flows

names = st.text(st.characters(codec="utf-8", exclude_categories=("Cs", "Cc")), min_size=1, max_size=40).filter(
    lambda s: s == s.strip() and s != ""
)


@st.composite
def any_phases(draw, agent_name):
    vmax = AGENTS[agent_name].vaporizer_max
    o2, air, n2o = draw(flows), draw(flows), draw(flows)
    assume(MIN_TOTAL_FLOW_L_MIN <= o2 + air + n2o <= 30)
    if draw(st.booleans()):
        control = dict(dial_pct=draw(floats(0.0, vmax)))
    else:
        control = dict(target_mac=draw(floats(0.0, 3.0)))
    return Phase(draw(names), draw(floats(1e-3, 1440.0)), o2, air, n2o, **control)


@st.composite
def any_plans(draw):
    agent = draw(st.sampled_from(VOLATILES))
    optional = lambda strat: st.one_of(st.none(), strat)  # noqa: E731
    patient = Patient(
        draw(floats(0.5, 350.0)),
        draw(floats(0.0, 120.0)),
        draw(optional(floats(0.11, 40.0))),
        draw(optional(floats(5.0, 2000.0))),
        draw(optional(floats(0.2, 40.0))),
    )
    s = Settings(
        draw(floats(0.0, 45.0)),
        draw(floats(50.0, 120.0)),
        draw(st.sampled_from(list(GWP_SOURCES))),
        draw(floats(0.0, 1.0)),
        draw(floats(MIN_O2_SHARE, 1.0)),
        draw(floats(0.0, 5.0)),
        draw(st.sampled_from(RATIO_BEHAVIOURS)),
        draw(floats(0.21, 1.0)),
        draw(floats(0.0, 20.0)),
    )
    prices = draw(
        st.one_of(
            st.just({}),
            st.fixed_dictionaries(
                {"currency": st.sampled_from(["EUR", "GBP", "CHF"]), "oxygen_per_1000_l": floats(0.0, 100.0)}
            ),
        )
    )
    phases = tuple(draw(st.lists(any_phases(agent), min_size=1, max_size=6)))
    return CasePlan(draw(names), agent, phases, patient, s, prices)


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(any_plans())
def test_plan_toml_round_trip_gives_the_same_plan(plan):
    assert parse_plan_text(plan_to_toml(plan)) == plan
