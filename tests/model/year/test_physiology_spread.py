"""The uncertain physiology of the uptake model: draws, their effect, and the spread of the figures."""

from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from model.circle import simulate_cases
from model.io.plans import load_plan
from model.io.scenario import load_scenario
from model.physiology import PHYSIOLOGY_KEYS, PHYSIOLOGY_SPREAD, SPREAD_BY_KEY, draw_physiology
from model.reference import DEFAULT_REFERENCE, FROM_MEMORY, PUBLISHED
from model.year.compare import compare_years
from model.year.result import compute_year
from model.year.sampling import RANGE_LABEL, RANGE_LABEL_PHYSIOLOGY
from model.year.uncertainty import case_liquid_ml, low_flow_target_plan, physiology_spread

ROOT = Path(__file__).resolve().parents[3]
YEAR = ROOT / "demo_data" / "year"
TARGET_PLAN = load_plan(YEAR / "plans" / "adult_target_2l.toml")
LOW_FLOW_PLAN = low_flow_target_plan(TARGET_PLAN)
SEVO = DEFAULT_REFERENCE.volatile("sevoflurane")
FAST = settings(max_examples=12, deadline=None, suppress_health_check=[HealthCheck.too_slow])
#: A short case held at an end-tidal target at low flow (the figure the spread is about).
CASE = dict(minutes=[[8.0], [60.0]], oxygen_l_min=[[4.0], [0.4]], air_l_min=[[2.0], [0.1]], target_mac=[[1.0], [1.0]])

#: Parameters whose larger value makes the patient take up more agent at a held end-tidal
#: (uptake = conductance x gradient; larger solubility, flow or tissue capacity; Eger EI II,
#: Anesthetic Uptake and Action, 1974, from memory), so the liquid a case needs grows with them.
UPTAKE_RAISING = ("blood_gas", "cardiac_output", "tissue_blood_fat", "volume_fat", "tissue_blood_muscle")


def _width(values) -> float:
    p5, p95 = np.percentile(values, (5.0, 95.0))
    return float(p95 - p5)


def test_every_spread_names_its_source_and_basis():
    # The blood/gas spread is read from two published studies (Anesth Analg 2015;120:45-50:
    # SD 0.06 of 0.74 for sevoflurane; Br J Anaesth 1992;69:259-62: SD 0.05 of 0.65);
    # the others are from memory and say so.
    assert SPREAD_BY_KEY["blood_gas"].basis == PUBLISHED
    assert "Anesth Analg 2015;120:45-50" in SPREAD_BY_KEY["blood_gas"].source
    assert 0.06 / 0.74 <= SPREAD_BY_KEY["blood_gas"].sigma <= 0.15
    for p in PHYSIOLOGY_SPREAD:
        assert p.source and p.basis in (PUBLISHED, FROM_MEMORY)
        assert (p.basis == FROM_MEMORY) == ("from memory" in p.source)


@FAST
@given(n=st.integers(1, 20), seed=st.integers(0, 2**31 - 1))
def test_zero_spread_gives_the_central_model_exactly(n, seed):
    # The central model over as many cases (numpy's sums round by the width of the arrays).
    central = simulate_cases(SEVO, weight_kg=np.full(n, 70.0), **CASE)
    drawn = simulate_cases(SEVO, physiology=draw_physiology(n, seed, 0.0), **CASE)
    for key in ("liquid_ml", "agent_uptake_l", "agent_vented_l", "co2_absorbed_l", "min_inspired_o2"):
        assert np.array_equal(drawn[key], central[key]), key


@FAST
@given(n=st.integers(1, 30), seed=st.integers(0, 2**31 - 1), scale=st.floats(0.0, 2.0))
def test_seeded_draws_repeat(n, seed, scale):
    a, b = draw_physiology(n, seed, scale), draw_physiology(n, seed, scale)
    assert set(a) == set(PHYSIOLOGY_KEYS)
    for k in a:
        assert a[k].shape == (n,) and np.array_equal(a[k], b[k])
    assert np.array_equal(case_liquid_ml(LOW_FLOW_PLAN, a), case_liquid_ml(LOW_FLOW_PLAN, b))


@FAST
@given(
    key=st.sampled_from(UPTAKE_RAISING),
    seed=st.integers(0, 2**31 - 1),
    low=st.floats(0.2, 1.0),
    factor=st.floats(1.3, 3.0),
)
def test_spread_widens_when_the_parameter_spread_widens(key, seed, low, factor):
    only = {k: (1.0 if k == key else 0.0) for k in PHYSIOLOGY_KEYS}
    narrow = draw_physiology(40, seed, {k: v * low for k, v in only.items()})
    wide = draw_physiology(40, seed, {k: v * low * factor for k, v in only.items()})
    w_narrow = _width(case_liquid_ml(LOW_FLOW_PLAN, narrow))
    w_wide = _width(case_liquid_ml(LOW_FLOW_PLAN, wide))
    assert w_wide > w_narrow > 0.0


def test_more_soluble_or_more_perfused_patients_need_more_liquid():
    # Source: Eger EI II, Anesthetic Uptake and Action, 1974 (uptake grows with blood/gas
    # coefficient and cardiac output), from memory.
    for key in ("blood_gas", "cardiac_output"):
        phys = {key: np.array([0.8, 1.0, 1.25])}
        liquid = case_liquid_ml(LOW_FLOW_PLAN, phys)
        assert liquid[0] < liquid[1] < liquid[2], key


def test_unknown_physiology_key_is_refused():
    with pytest.raises(ValueError, match="physiology keys"):
        simulate_cases(SEVO, physiology={"cardiac_outptu": 1.1}, **CASE)


@pytest.fixture(scope="module")
def scenarios():
    return load_scenario(YEAR / "baseline_2l.toml"), load_scenario(YEAR / "proposal_half_litre.toml")


def test_zero_spread_gives_every_figure_its_central_value(scenarios):
    b, p = scenarios
    res = physiology_spread(LOW_FLOW_PLAN, TARGET_PLAN, b, p, draws=3, spread_scale=0.0, sensitivity=False)
    for row in res.table.to_dict("records"):
        assert row["p5"] == row["p50"] == row["p95"] == row["central"], row["key"]


def test_spread_and_sensitivity_of_the_demo(scenarios):
    b, p = scenarios
    res = physiology_spread(LOW_FLOW_PLAN, TARGET_PLAN, b, p, draws=12, seed=3)
    table = res.table.set_index("key")
    liquid = table.loc["liquid_ml"]
    assert liquid["p5"] < liquid["central"] < liquid["p95"]
    sens = res.sensitivity
    assert set(sens["parameter"]) == set(PHYSIOLOGY_KEYS)
    top = sens[(sens["figure"] == "liquid_ml") & (sens["rank"] == 1)]
    assert len(top) >= 1 and top["swing"].abs().iloc[0] > 0
    # Late uptake at a held end-tidal: the fat's blood flow and coefficients move it; the
    # year's central saving is the one compare_years gives.
    assert table.loc["late_uptake_sevoflurane_l", "p95"] > table.loc["late_uptake_sevoflurane_l", "p5"]
    comp = compare_years(b, p, draws=10)
    saving = -comp.summary.set_index("key").loc["cost_total", "difference"]
    assert table.loc["year_saving", "central"] == pytest.approx(saving, rel=1e-12)


def test_year_bands_say_what_they_hold_and_default_is_unchanged(scenarios):
    b, p = scenarios
    plain = compute_year(b, draws=60, seed=4)
    assert plain.range_label == RANGE_LABEL and plain.to_dict()["range_label"] == RANGE_LABEL
    with_model = compute_year(b, draws=60, seed=4, model_uncertainty=True)
    assert with_model.range_label == RANGE_LABEL_PHYSIOLOGY
    assert "model physiology" in with_model.to_dict()["range_label"]
    # The central figures stay the central model's; only the bands move.
    assert with_model.totals == plain.totals
    bands = with_model.summary.set_index("key")
    assert not np.allclose(bands["p5"], plain.summary.set_index("key")["p5"])
    comp = compare_years(b, p, draws=60, seed=4, model_uncertainty=True)
    assert comp.to_dict()["range_label"] == RANGE_LABEL_PHYSIOLOGY


@FAST
@given(
    flow_muscle=st.floats(0.3, 2.0),
    flow_fat=st.floats(0.3, 2.0),
    weight=st.floats(40.0, 120.0),
)
def test_tissue_flows_still_add_up_to_the_cardiac_output(flow_muscle, flow_fat, weight):
    # The vessel-rich group takes what muscle and fat do not: the blood flow through the
    # tissues is the cardiac output, whatever the multipliers (mass balance of blood flow,
    # common practice, no source).
    from model.uptake import tissue_compartments

    q = 0.2 * weight**0.75
    g, _ = tissue_compartments(
        "compartment", "sevoflurane", 1.0, weight, q, {"flow_muscle": flow_muscle, "flow_fat": flow_fat}
    )
    assert g.sum() == pytest.approx(q, rel=1e-12)
