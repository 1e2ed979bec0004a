"""Property tests of the department year (hypothesis); each name states the invariant."""

from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from model.io.scenario import load_scenario
from model.reference import VOLATILES
from model.year.compare import compare_years
from model.year.inputs import Sampling
from model.year.result import compute_year

YEAR = Path(__file__).resolve().parents[3] / "demo_data" / "year"
BASE = load_scenario(YEAR / "baseline_2l.toml")
N_TYPES = len(BASE.case_mix.types)
FEW = Sampling(draws=64, seed=1, price_spread=0.1, gwp_sources=("ar6_gwp100", "ar5_gwp100"))


def _with_counts(counts):
    types = tuple(replace(t, cases_per_year=c) for t, c in zip(BASE.case_mix.types, counts, strict=True))
    return replace(BASE, case_mix=replace(BASE.case_mix, types=types), sampling=FEW)


counts = st.lists(st.integers(0, 3000), min_size=N_TYPES, max_size=N_TYPES)


@settings(max_examples=25, deadline=None)
@given(counts=counts, which=st.integers(0, N_TYPES - 1), extra=st.integers(1, 500))
def test_more_cases_never_cost_less(counts, which, extra):
    more = list(counts)
    more[which] += extra
    a = compute_year(_with_counts(counts), draws=1).totals
    b = compute_year(_with_counts(more), draws=1).totals
    assert b["cost_total"] >= a["cost_total"]
    assert b["bottles_total"] >= a["bottles_total"]
    assert b["co2e_total_t"] >= a["co2e_total_t"]


@pytest.mark.slow
@settings(max_examples=25, deadline=None)
@given(
    high=st.floats(0.3, 8.0), drop=st.floats(0.05, 0.95), adherence=st.floats(0.0, 1.0), dial_factor=st.floats(0.5, 2.0)
)
def test_lowering_the_practice_flow_never_raises_agent_use(high, drop, adherence, dial_factor):
    kw = dict(dial_factor=dial_factor, adherence=adherence, adherence_low=adherence, adherence_high=adherence)
    a = compute_year(BASE.with_practice(maintenance_flow_l_min=high, **kw), draws=1).totals
    b = compute_year(BASE.with_practice(maintenance_flow_l_min=high * drop, **kw), draws=1).totals
    for agent in VOLATILES:
        assert b[f"liquid_ml_{agent}"] <= a[f"liquid_ml_{agent}"] * (1 + 1e-12)
        assert b[f"bottles_{agent}"] <= a[f"bottles_{agent}"]


@settings(max_examples=25, deadline=None)
@given(scale=st.floats(0.05, 0.99))
def test_lowering_every_flow_of_the_plans_never_raises_agent_use(scale):
    def scaled(t):
        plan = t.plan
        for i, p in enumerate(plan.phases):
            plan = plan.with_phase(
                i,
                oxygen_l_min=p.oxygen_l_min * scale,
                air_l_min=p.air_l_min * scale,
                nitrous_oxide_l_min=p.nitrous_oxide_l_min * scale,
            )
        return replace(t, plan=plan)

    low = replace(BASE, case_mix=replace(BASE.case_mix, types=tuple(scaled(t) for t in BASE.case_mix.types)))
    a = compute_year(BASE, draws=1).totals
    b = compute_year(low, draws=1).totals
    for agent in VOLATILES:
        assert b[f"liquid_ml_{agent}"] <= a[f"liquid_ml_{agent}"] * (1 + 1e-12)


@settings(max_examples=20, deadline=None)
@given(
    seed=st.integers(0, 2**32),
    draws=st.integers(1, 400),
    name=st.sampled_from(["baseline_2l.toml", "proposal_half_litre.toml", "proposal_sevo_not_des.toml"]),
)
def test_a_scenario_compared_with_itself_differs_by_exactly_zero(seed, draws, name):
    s = load_scenario(YEAR / name)
    comp = compare_years(s, s, draws=draws, seed=seed)
    for key, diff in comp.difference.items():
        assert np.all(diff == 0.0), key
    assert (comp.summary[["difference", "p5", "p50", "p95"]].to_numpy() == 0.0).all()


@settings(max_examples=15, deadline=None)
@given(seed=st.integers(0, 2**32))
def test_every_draw_keeps_totals_non_negative_and_bottles_whole(seed):
    r = compute_year(load_scenario(YEAR / "proposal_half_litre.toml"), draws=200, seed=seed)
    for key, values in r.draws.items():
        assert np.all(values >= 0), key
        if key.startswith("bottles_"):
            assert np.all(values == np.round(values)), key
