"""The department year: sum of case types, bands, GWP cross-check, months, scenarios."""

from dataclasses import replace
from pathlib import Path

import globalwarmingpotentials
import numpy as np
import pytest
import scipy.stats

from model.case import compute_case
from model.casemix import parse_casemix_text
from model.errors import InputError
from model.plan import load_plan
from model.reference import DEFAULT_REFERENCE
from model.scenario import DAYS_PER_MONTH, Sampling, Scenario, load_scenario, parse_scenario_text
from model.year import (compare_years, compute_year, headline_figures, stretch_minutes_moments,
                        triangular_ppf)

ROOT = Path(__file__).resolve().parents[1]
YEAR = ROOT / "demo_data" / "year"
PLANS = ROOT / "demo_data" / "plans"
HEADER = "case_type,cases_per_year,median_duration,duration_spread,sevoflurane,desflurane,isoflurane,n2o_share,plan\n"


def _plan(name, where):
    return load_plan(PLANS / name)


def _mix(rows: str):
    return parse_casemix_text(HEADER + rows, "test mix", _plan)


def _scenario(rows: str, **kw) -> Scenario:
    kw.setdefault("sampling", Sampling(draws=200, seed=7))
    return Scenario("test", _mix(rows), **kw)


FIXED = ("Lap chole,120,90,0,1,0,0,0,lap_chole_low_flow.toml\n"
         "Hip,35,130,0,0,1,0,1,hip_desflurane_n2o.toml\n"
         "Lap chole high,17,70,0,1,0,0,0,lap_chole_high_flow.toml\n")


def _case_at(plan, median, k):
    fixed = sum(p.minutes for j, p in enumerate(plan.phases) if j != k)
    return compute_case(plan.with_phase(k, minutes=median - fixed)).totals


def test_year_is_the_sum_of_its_case_types():
    # Analytic check: with fixed durations a year is each type's per-case result x its count.
    year = compute_year(_scenario(FIXED)).totals
    expected = {k: 0.0 for k in ("sevo", "des", "o2", "air", "n2o", "co2e_agent", "co2e_n2o", "gas_cost",
                                 "absorbent_g")}
    for t in _mix(FIXED).types:
        c = _case_at(t.plan, t.median_min, t.stretch_index)
        n = t.cases_per_year
        expected["sevo" if t.plan.agent == "sevoflurane" else "des"] += n * c["liquid_agent_ml"]
        expected["o2"] += n * c["oxygen_l"]
        expected["air"] += n * c["air_l"]
        expected["n2o"] += n * c["nitrous_oxide_l"]
        expected["co2e_agent"] += n * c["co2e_agent_kg"]
        expected["co2e_n2o"] += n * c["co2e_nitrous_oxide_kg"]
        expected["gas_cost"] += n * (c["cost_oxygen"] + c["cost_air"] + c["cost_nitrous_oxide"])
        expected["absorbent_g"] += n * c["absorbent_g"]
    rel = 1e-9
    assert year["liquid_ml_sevoflurane"] == pytest.approx(expected["sevo"], rel=rel)
    assert year["liquid_ml_desflurane"] == pytest.approx(expected["des"], rel=rel)
    assert year["oxygen_l"] == pytest.approx(expected["o2"], rel=rel)
    assert year["air_l"] == pytest.approx(expected["air"], rel=rel)
    assert year["nitrous_oxide_l"] == pytest.approx(expected["n2o"], rel=rel)
    # The year counts all delivered agent as emitted; the case model subtracts the metabolised
    # share of the patient's uptake (under 1 % of the total), and integrates absorbent over
    # the simulated time course where the year uses its steady-state rate.
    assert year["co2e_sevoflurane_t"] + year["co2e_desflurane_t"] == pytest.approx(expected["co2e_agent"] / 1000, rel=0.01)
    assert year["co2e_sevoflurane_t"] + year["co2e_desflurane_t"] >= expected["co2e_agent"] / 1000
    assert year["absorbent_kg"] == pytest.approx(expected["absorbent_g"] / 1000, rel=0.03)
    assert year["co2e_nitrous_oxide_t"] == pytest.approx(expected["co2e_n2o"] / 1000, rel=1e-4)
    assert year["cost_oxygen"] + year["cost_air"] + year["cost_nitrous_oxide"] == pytest.approx(expected["gas_cost"], rel=rel)


def test_bottles_are_whole_and_rounded_up_per_month():
    result = compute_year(_scenario(FIXED))
    sevo_ml = result.totals["liquid_ml_sevoflurane"]
    volume = DEFAULT_REFERENCE.agents["sevoflurane"].bottle_volume
    # Common practice, no source: a month's bottles are its liquid divided by the bottle
    # volume, rounded up; months share the year by their days.
    expected = sum(np.ceil(sevo_ml * d / 365 / volume) for d in DAYS_PER_MONTH)
    assert result.totals["bottles_sevoflurane"] == expected
    assert (result.monthly["bottles_sevoflurane"] % 1 == 0).all()
    assert result.monthly["liquid_ml_sevoflurane"].sum() == pytest.approx(sevo_ml)
    assert result.monthly["cost_total"].sum() == pytest.approx(result.totals["cost_total"])
    price = DEFAULT_REFERENCE.prices.bottle["sevoflurane"]
    assert result.totals["cost_sevoflurane"] == pytest.approx(expected * price)


def test_zero_spread_and_full_adherence_give_one_value():
    base = load_scenario(YEAR / "baseline_2l.toml")
    mix = replace(base.casemix, types=tuple(replace(t, spread=0.0) for t in base.casemix.types))
    scenario = replace(base, casemix=mix, sampling=Sampling(draws=500, seed=3, price_spread=0.0),
                       ).with_practice(maintenance_flow_l_min=0.5, dial_factor=1.5, adherence=1.0,
                                       adherence_low=1.0, adherence_high=1.0)
    result = compute_year(scenario)
    for row in result.summary.to_dict("records"):
        assert row["p5"] == row["p50"] == row["p95"], row["key"]
        assert row["p50"] == pytest.approx(row["deterministic"], rel=1e-12, abs=1e-12), row["key"]


def test_bands_widen_with_spread_and_order_p5_p50_p95():
    result = compute_year(load_scenario(YEAR / "baseline_2l.toml"), draws=2000)
    for row in result.summary.to_dict("records"):
        assert row["p5"] <= row["p50"] <= row["p95"], row["key"]
    s = result.summary.set_index("key")
    assert s.loc["cost_total", "p5"] < s.loc["cost_total", "p95"]


def test_emissions_match_ipcc_ar6_gwp100_in_globalwarmingpotentials():
    rows = ("Des,50,100,0,0,1,0,1,hip_desflurane_n2o.toml\n"
            "Iso,40,90,0,0,0,1,0,lap_chole_high_flow.toml\n")
    result = compute_year(_scenario(rows, gwp_source="ar6_gwp100"))
    t = result.totals
    # Source: IPCC AR6 WG1 GWP100 as carried by the PyPI package globalwarmingpotentials
    # (desflurane = HFE-236ea2, isoflurane = HCFE-235da2, N2O).
    ar6 = globalwarmingpotentials.data["AR6GWP100"]
    ref = DEFAULT_REFERENCE.agents
    des_g = t["liquid_ml_desflurane"] * ref["desflurane"].liquid_density
    iso_g = t["liquid_ml_isoflurane"] * ref["isoflurane"].liquid_density
    # Ideal gas at 20 degC, 101.325 kPa: 24.055 L/mol (DESIGN 3.1); N2O 44.013 g/mol.
    n2o_g = t["nitrous_oxide_l"] / 24.055 * 44.013
    assert t["co2e_desflurane_t"] == pytest.approx(des_g / 1e6 * ar6["HFE236ea2"], rel=1e-4)
    assert t["co2e_isoflurane_t"] == pytest.approx(iso_g / 1e6 * ar6["HCFE235da2"], rel=1e-4)
    assert t["co2e_nitrous_oxide_t"] == pytest.approx(n2o_g / 1e6 * ar6["N2O"], rel=1e-4)
    assert t["co2e_total_t"] == pytest.approx(t["co2e_desflurane_t"] + t["co2e_isoflurane_t"]
                                              + t["co2e_nitrous_oxide_t"])


def test_car_equivalence_uses_the_editable_factor():
    s = _scenario(FIXED, car_kg_per_km=0.25, car_source="my factor")
    r = compute_year(s)
    assert r.totals["car_km"] == pytest.approx(r.totals["co2e_total_t"] * 1000 / 0.25)
    assert "my factor" in " ".join(r.notes)


def test_runs_are_reproducible_by_seed():
    s = load_scenario(YEAR / "proposal_half_litre.toml")
    a = compute_year(s, draws=300, seed=11)
    b = compute_year(s, draws=300, seed=11)
    c = compute_year(s, draws=300, seed=12)
    assert np.array_equal(a.draws["cost_total"], b.draws["cost_total"])
    assert not np.array_equal(a.draws["cost_total"], c.draws["cost_total"])


def test_paired_difference_is_tighter_than_independent_bands():
    base = load_scenario(YEAR / "baseline_2l.toml")
    prop = load_scenario(YEAR / "proposal_half_litre.toml")
    comp = compare_years(base, prop, draws=3000)
    d = comp.difference["liquid_ml_sevoflurane"]
    independent = np.hypot(comp.baseline.draws["liquid_ml_sevoflurane"].std(),
                           comp.proposal.draws["liquid_ml_sevoflurane"].std())
    assert d.std() < independent
    row = comp.summary.set_index("key").loc["cost_total"]
    assert row["p95"] < 0 and row["difference"] < 0


def test_zero_adherence_is_the_baseline():
    base = load_scenario(YEAR / "baseline_2l.toml")
    none = base.with_practice(maintenance_flow_l_min=0.5, adherence=0.0, adherence_low=0.0, adherence_high=0.0)
    assert compute_year(none, draws=50).totals == compute_year(base, draws=50).totals


def test_switch_moves_the_followed_share_of_desflurane():
    base = load_scenario(YEAR / "baseline_2l.toml")
    switch = base.with_practice(switch_from="desflurane", switch_to="sevoflurane", adherence=0.9,
                                adherence_low=0.9, adherence_high=0.9)
    b, s = compute_year(base, draws=50).totals, compute_year(switch, draws=50).totals
    assert s["liquid_ml_desflurane"] == pytest.approx(0.1 * b["liquid_ml_desflurane"])
    assert s["co2e_total_t"] < b["co2e_total_t"]


def test_stretch_moments_match_scipy_lognormal_expectation():
    median, spread, fixed = 80.0, 0.4, 18.0
    mean, var = stretch_minutes_moments(median, spread, fixed)
    # Source: numerical integration by scipy.stats (log-normal with s = spread, scale = median).
    dist = scipy.stats.lognorm(spread, scale=median)
    m1 = dist.expect(lambda d: max(d - fixed, 0.0))
    m2 = dist.expect(lambda d: max(d - fixed, 0.0) ** 2)
    assert float(mean) == pytest.approx(m1, rel=1e-6)
    assert float(var) == pytest.approx(m2 - m1 ** 2, rel=1e-5)
    assert stretch_minutes_moments(median, 0.0, fixed)[0] == pytest.approx(median - fixed)


def test_triangular_ppf_matches_scipy():
    u = np.linspace(0, 1, 11)
    low, mode, high = 0.6, 0.8, 0.95
    # Source: scipy.stats.triang (c = (mode - low) / (high - low), loc = low, scale = high - low).
    expected = scipy.stats.triang((mode - low) / (high - low), loc=low, scale=high - low).ppf(u)
    assert triangular_ppf(u, low, mode, high) == pytest.approx(expected)


def test_gwp_source_without_a_value_is_an_input_error():
    text = HEADER.replace("n2o_share", "halothane,n2o_share") + "Old,10,60,0,0,0,0,1,0,lap_chole_high_flow.toml\n"
    mix = parse_casemix_text(text, "mix", _plan)
    with pytest.raises(InputError, match="no value for halothane"):
        compute_year(Scenario("h", mix, gwp_source="sulbaek_andersen_2012", sampling=Sampling(draws=5)))


def test_currency_mismatch_is_an_input_error():
    base = _scenario(FIXED)
    other = replace(base, prices={"currency": "EUR"})
    with pytest.raises(InputError, match="currency"):
        compare_years(base, other)


def test_scenario_file_errors_name_the_field(tmp_path):
    with pytest.raises(InputError, match=r"s.toml: practice.adherence"):
        parse_scenario_text('case_mix = "x.csv"\n[practice]\nadherence = 1.5\n', "s.toml", YEAR)
    with pytest.raises(InputError, match=r"uncertainty.draws"):
        parse_scenario_text('case_mix = "fernhollow_casemix.csv"\n[uncertainty]\ndraws = 0\n', "s.toml", YEAR)
    with pytest.raises(InputError, match=r"s.toml: gwp_source"):
        parse_scenario_text('case_mix = "fernhollow_casemix.csv"\ngwp_source = "ar9"\n', "s.toml", YEAR)
    with pytest.raises(InputError, match=r"s.toml: \[prices\]: prices.bottle"):
        parse_scenario_text('case_mix = "fernhollow_casemix.csv"\n[prices]\nbottle = { sevoflurane = -1 }\n',
                            "s.toml", YEAR)


def test_headline_keys_match_the_json():
    result = compute_year(_scenario(FIXED))
    keys = [k for k, _, _ in headline_figures(result.currency)]
    assert list(result.to_dict()["bands"]) == keys
    assert set(keys) <= set(result.totals)


def test_per_case_averages_divide_by_cases():
    result = compute_year(_scenario(FIXED))
    cases = 120 + 35 + 17
    assert result.per_case["co2e_total_t"] == pytest.approx(result.totals["co2e_total_t"] / cases)
