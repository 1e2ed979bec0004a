"""The department year: sum of case types, bands, GWP cross-check, months, scenarios."""

from dataclasses import replace
from pathlib import Path

import globalwarmingpotentials
import numpy as np
import pytest
import scipy.stats

from model.base.errors import InputError
from model.case import compute_case
from model.io.case_mix import parse_case_mix_text
from model.io.plans import load_plan
from model.io.scenario import load_scenario, parse_scenario_text
from model.reference import DEFAULT_REFERENCE
from model.year.compare import compare_years
from model.year.inputs import DAYS_PER_MONTH, Sampling, Scenario
from model.year.nodes import (
    NODE_Z,
    duration_nodes,
    interpolate_nodes,
    piecewise_linear_moments,
    stretch_minutes_moments,
)
from model.year.result import compute_year, headline_figures
from model.year.sampling import triangular_ppf
from model.year.simulate import QUANTITIES, practised_plan, year_inputs

ROOT = Path(__file__).resolve().parents[3]
YEAR = ROOT / "demo_data" / "year"
PLANS = ROOT / "demo_data" / "plans"
HEADER = "case_type,cases_per_year,median_duration,duration_spread,sevoflurane,desflurane,isoflurane,n2o_share,plan\n"


def _plan(name, where):
    return load_plan(PLANS / name if (PLANS / name).is_file() else YEAR / name)


def _mix(rows: str):
    return parse_case_mix_text(HEADER + rows, "test mix", _plan)


def _scenario(rows: str, **kw) -> Scenario:
    kw.setdefault("sampling", Sampling(draws=200, seed=7))
    return Scenario("test", _mix(rows), **kw)


FIXED = (
    "Lap chole,120,90,0,1,0,0,0,lap_chole_low_flow.toml\n"
    "Hip,35,130,0,0,1,0,1,hip_desflurane_n2o.toml\n"
    "Lap chole high,17,70,0,1,0,0,0,lap_chole_high_flow.toml\n"
    "Laparotomy,25,150,0,1,0,0,0,plans/adult_target_2l.toml\n"
)


def _case_at(plan, median, k):
    fixed = sum(p.minutes for j, p in enumerate(plan.phases) if j != k)
    return compute_case(plan.with_phase(k, minutes=median - fixed)).totals


def test_year_is_the_sum_of_its_case_types():
    # Analytic check: with fixed durations a year is each type's per-case result from
    # compute_case (the same circle-model physics) x its count, for every total.
    year = compute_year(_scenario(FIXED)).totals
    keys = (
        "liquid_agent_ml",
        "oxygen_l",
        "air_l",
        "nitrous_oxide_l",
        "absorbent_g",
        "agent_emitted_g",
        "nitrous_oxide_emitted_g",
        "co2e_agent_kg",
        "co2e_nitrous_oxide_kg",
        "cost_oxygen",
        "cost_air",
        "cost_nitrous_oxide",
        "cost_absorbent",
    )
    expected = {(a, k): 0.0 for a in ("sevoflurane", "desflurane") for k in keys}
    for t in _mix(FIXED).types:
        c = _case_at(t.plan, t.median_min, t.stretch_index)
        for k in keys:
            expected[(t.plan.agent, k)] += t.cases_per_year * c[k]
    both = lambda k: expected[("sevoflurane", k)] + expected[("desflurane", k)]  # noqa: E731
    got = {
        "sevo liquid": (year["liquid_ml_sevoflurane"], expected[("sevoflurane", "liquid_agent_ml")]),
        "des liquid": (year["liquid_ml_desflurane"], expected[("desflurane", "liquid_agent_ml")]),
        "sevo emitted": (year["emitted_kg_sevoflurane"] * 1000, expected[("sevoflurane", "agent_emitted_g")]),
        "des emitted": (year["emitted_kg_desflurane"] * 1000, expected[("desflurane", "agent_emitted_g")]),
        "co2e agents": ((year["co2e_sevoflurane_t"] + year["co2e_desflurane_t"]) * 1000, both("co2e_agent_kg")),
        "co2e N2O": (year["co2e_nitrous_oxide_t"] * 1000, both("co2e_nitrous_oxide_kg")),
        "N2O emitted": (year["emitted_kg_nitrous_oxide"] * 1000, both("nitrous_oxide_emitted_g")),
        "oxygen": (year["oxygen_l"], both("oxygen_l")),
        "air": (year["air_l"], both("air_l")),
        "nitrous oxide": (year["nitrous_oxide_l"], both("nitrous_oxide_l")),
        "absorbent": (year["absorbent_kg"] * 1000, both("absorbent_g")),
        "gas cost": (
            year["cost_oxygen"] + year["cost_air"] + year["cost_nitrous_oxide"],
            both("cost_oxygen") + both("cost_air") + both("cost_nitrous_oxide"),
        ),
        "absorbent cost": (year["cost_absorbent"], both("cost_absorbent")),
    }
    # All agents' cases of one agent share one simulate_cases call, where a case takes the
    # call's step count for each phase (finer steps than alone when other cases are longer).
    # That moves the dial found for an end-tidal target, and so the liquid and emitted agent,
    # by under 1e-4; every other total (and dial-mode agent) matches to rounding.
    for name, (y, e) in got.items():
        assert y == pytest.approx(e, rel=1e-4), name
    for name in (
        "des liquid",
        "des emitted",
        "oxygen",
        "air",
        "nitrous oxide",
        "absorbent",
        "gas cost",
        "absorbent cost",
        "co2e N2O",
    ):
        assert got[name][0] == pytest.approx(got[name][1], rel=1e-12), name


def test_part_used_bottles_are_carried_across_months_not_rounded_up_month_by_month():
    result = compute_year(_scenario(FIXED))
    sevo_ml = result.totals["liquid_ml_sevoflurane"]
    volume = DEFAULT_REFERENCE.agents["sevoflurane"].bottle_volume
    # Common practice, no source: a bottle opened in one month and finished in the next is
    # bought once; by the end of each month the bottles opened are the liquid used so far,
    # rounded up to whole bottles; months share the year by their days.
    used = np.cumsum([sevo_ml * d / 365 for d in DAYS_PER_MONTH])
    opened = np.diff(np.ceil(used / volume - 1e-9), prepend=0.0)
    assert result.monthly["bottles_sevoflurane"].tolist() == pytest.approx(opened.tolist())
    assert result.totals["bottles_sevoflurane"] == np.ceil(sevo_ml / volume - 1e-9)
    assert (result.monthly["bottles_sevoflurane"] % 1 == 0).all()
    assert result.monthly["liquid_ml_sevoflurane"].sum() == pytest.approx(sevo_ml)
    assert result.monthly["cost_total"].sum() == pytest.approx(result.totals["cost_total"])
    price = DEFAULT_REFERENCE.prices.bottle["sevoflurane"]
    assert result.totals["cost_sevoflurane"] == pytest.approx(np.ceil(sevo_ml / volume - 1e-9) * price)


def test_a_low_use_agent_buys_its_liquid_in_bottles_not_a_bottle_every_month():
    from model.year.sampling import bottles_opened

    # 875 mL and 2,337 mL a year, spread evenly: once twelve bottles each (one a month).
    volume = np.array([250.0])
    for year_ml, bottles in ((875.0, 4), (2337.0, 10)):
        monthly = np.full((12, 1), year_ml / 12)
        opened = bottles_opened(monthly, volume)
        # Common practice, no source: ceil(875 / 250) = 4, ceil(2337 / 250) = 10.
        assert opened.sum() == bottles
        assert set(opened.ravel()) <= {0.0, 1.0}


def test_zero_spread_and_full_adherence_give_one_value():
    base = load_scenario(YEAR / "baseline_2l.toml")
    mix = replace(base.case_mix, types=tuple(replace(t, spread=0.0) for t in base.case_mix.types))
    scenario = replace(
        base,
        case_mix=mix,
        sampling=Sampling(draws=500, seed=3, price_spread=0.0),
    ).with_practice(maintenance_flow_l_min=0.5, dial_factor=1.5, adherence=1.0, adherence_low=1.0, adherence_high=1.0)
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
    rows = "Des,50,100,0,0,1,0,1,hip_desflurane_n2o.toml\nIso,40,90,0,0,0,1,0,lap_chole_high_flow.toml\n"
    result = compute_year(_scenario(rows, gwp_source="ar6_gwp100"))
    t = result.totals
    # Source: IPCC AR6 WG1 GWP100 as carried by the PyPI package globalwarmingpotentials
    # (desflurane = HFE-236ea2, isoflurane = HCFE-235da2, N2O).
    ar6 = globalwarmingpotentials.data["AR6GWP100"]
    assert t["co2e_desflurane_t"] == pytest.approx(t["emitted_kg_desflurane"] / 1000 * ar6["HFE236ea2"], rel=1e-4)
    assert t["co2e_isoflurane_t"] == pytest.approx(t["emitted_kg_isoflurane"] / 1000 * ar6["HCFE235da2"], rel=1e-4)
    assert t["co2e_nitrous_oxide_t"] == pytest.approx(t["emitted_kg_nitrous_oxide"] / 1000 * ar6["N2O"], rel=1e-4)
    assert t["co2e_total_t"] == pytest.approx(
        t["co2e_desflurane_t"] + t["co2e_isoflurane_t"] + t["co2e_nitrous_oxide_t"]
    )
    ref = DEFAULT_REFERENCE.agents
    # Emitted is delivered less the metabolised share of uptake: desflurane about 0.02 %,
    # isoflurane about 0.2 % of uptake (from memory, docs/methods.md, Emitted mass), so nearly all that
    # is delivered; N2O volume to mass at 24.055 L/mol (20 degC, docs/methods.md, Vapour from liquid), 44.013 g/mol.
    des_g = t["liquid_ml_desflurane"] * ref["desflurane"].liquid_density
    iso_g = t["liquid_ml_isoflurane"] * ref["isoflurane"].liquid_density
    n2o_g = t["nitrous_oxide_l"] / 24.055 * 44.013
    assert 0.998 * des_g <= t["emitted_kg_desflurane"] * 1000 <= des_g
    assert 0.995 * iso_g <= t["emitted_kg_isoflurane"] * 1000 <= iso_g
    assert t["emitted_kg_nitrous_oxide"] * 1000 == pytest.approx(n2o_g, rel=1e-3)


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
    independent = np.hypot(
        comp.baseline.draws["liquid_ml_sevoflurane"].std(), comp.proposal.draws["liquid_ml_sevoflurane"].std()
    )
    assert d.std() < independent
    row = comp.summary.set_index("key").loc["cost_total"]
    assert row["p95"] < 0 and row["difference"] < 0


def test_zero_adherence_is_the_baseline():
    base = load_scenario(YEAR / "baseline_2l.toml")
    none = base.with_practice(maintenance_flow_l_min=0.5, adherence=0.0, adherence_low=0.0, adherence_high=0.0)
    assert compute_year(none, draws=50).totals == compute_year(base, draws=50).totals


def test_switch_moves_the_followed_share_of_desflurane():
    base = load_scenario(YEAR / "baseline_2l.toml")
    switch = base.with_practice(
        switch_from="desflurane", switch_to="sevoflurane", adherence=0.9, adherence_low=0.9, adherence_high=0.9
    )
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
    assert float(var) == pytest.approx(m2 - m1**2, rel=1e-5)
    assert stretch_minutes_moments(median, 0.0, fixed)[0] == pytest.approx(median - fixed)


def test_triangular_ppf_matches_scipy():
    u = np.linspace(0, 1, 11)
    low, mode, high = 0.6, 0.8, 0.95
    # Source: scipy.stats.triang (c = (mode - low) / (high - low), loc = low, scale = high - low).
    expected = scipy.stats.triang((mode - low) / (high - low), loc=low, scale=high - low).ppf(u)
    assert triangular_ppf(u, low, mode, high) == pytest.approx(expected)


def test_gwp_source_without_a_value_is_an_input_error():
    text = HEADER.replace("n2o_share", "halothane,n2o_share") + "Old,10,60,0,0,0,0,1,0,lap_chole_high_flow.toml\n"
    mix = parse_case_mix_text(text, "mix", _plan)
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
        parse_scenario_text(
            'case_mix = "fernhollow_casemix.csv"\n[prices]\nbottle = { sevoflurane = -1 }\n', "s.toml", YEAR
        )


def test_headline_keys_match_the_json():
    result = compute_year(_scenario(FIXED))
    keys = [k for k, _, _ in headline_figures(result.currency)]
    assert list(result.to_dict()["ranges"]) == keys
    assert set(keys) <= set(result.totals)


def test_per_case_averages_divide_by_cases():
    result = compute_year(_scenario(FIXED))
    cases = 120 + 35 + 17 + 25
    assert result.per_case["co2e_total_t"] == pytest.approx(result.totals["co2e_total_t"] / cases)


def _subplan_case(sub, stretch_min):
    return compute_case(sub.plan.with_phase(sub.stretch_index, minutes=float(stretch_min))).totals


_DIRECT = {
    "oxygen_l": "oxygen_l",
    "air_l": "air_l",
    "nitrous_oxide_l": "nitrous_oxide_l",
    "absorbent_g": "absorbent_g",
    "nitrous_oxide_emitted_g": "nitrous_oxide_emitted_g",
    "minutes": "duration_min",
}


@pytest.mark.parametrize("name", ["baseline_2l.toml", "proposal_half_litre.toml"])
def test_interpolated_case_totals_are_within_one_percent_of_direct_simulation(name):
    # The year simulates each type at a few durations and interpolates between them; at
    # random durations from each type's distribution the interpolated per-case totals stay
    # within 1 % of compute_case (measured: under 0.6 %, largest for end-tidal targets at
    # 0.5 L/min; dial-mode agent, gases and absorbent are linear in the minutes, so exact).
    scenario = load_scenario(YEAR / name)
    inp = year_inputs(scenario)
    rng = np.random.default_rng(20261201)
    target_types = {i for i, t in enumerate(scenario.case_mix.types) if any(p.target_mac for p in t.plan.phases)}
    assert target_types, "the demo mix has a target-mode case type"
    # Every sub-plan of the target-mode type, and a sample of the others (for speed).
    subs = [s for s in inp.subplans if s.type_index in target_types]
    others = [s for s in inp.subplans if s.type_index not in target_types]
    subs += [others[i] for i in rng.choice(len(others), 6, replace=False)]
    for sub in subs:
        t = scenario.case_mix.types[sub.type_index]
        stretch = np.maximum(t.median_min * np.exp(t.spread * rng.standard_normal(2)) - t.fixed_min, 0.0)
        est = interpolate_nodes(sub.nodes_min, sub.totals, stretch)
        for x, row in zip(stretch, est, strict=True):
            c = _subplan_case(sub, x)
            want = {
                f"liquid_ml:{sub.agent}": c["liquid_agent_ml"],
                f"emitted_g:{sub.agent}": c["agent_emitted_g"],
                **{q: c[k] for q, k in _DIRECT.items()},
            }
            for q, v in want.items():
                assert row[QUANTITIES.index(q)] == pytest.approx(v, rel=0.01, abs=1e-9), (t.name, sub.agent, q, x)


def test_piecewise_linear_moments_match_scipy_lognormal_expectation():
    nodes = np.array([10.0, 40.0, 70.0, 150.0])
    values = np.column_stack([np.array([5.0, 17.0, 26.0, 48.0]), nodes * 2.0 + 3.0])
    median, spread, fixed = 80.0, 0.45, 18.0
    mean, cov, var = piecewise_linear_moments(nodes, values, median, spread, fixed)
    # Source: numerical integration by scipy.stats (log-normal with s = spread, scale = median)
    # of the same interpolation (extrapolated linearly beyond the outer nodes).
    dist = scipy.stats.lognorm(spread, scale=median)
    f = lambda d, q: interpolate_nodes(nodes, values, [max(d - fixed, 0.0)])[0, q]  # noqa: E731
    x = lambda d: max(d - fixed, 0.0)  # noqa: E731
    ex = dist.expect(x)
    for q in range(2):
        m = dist.expect(lambda d, q=q: f(d, q))
        assert mean[q] == pytest.approx(m, rel=1e-6)
        assert cov[q] == pytest.approx(dist.expect(lambda d, q=q: f(d, q) * x(d)) - m * ex, rel=1e-5)
        assert var[q] == pytest.approx(dist.expect(lambda d, q=q: f(d, q) ** 2) - m * m, rel=1e-5)
    # A linear total (column 1) moves exactly with the minutes: slope 2.
    assert cov[1] / stretch_minutes_moments(median, spread, fixed)[1] == pytest.approx(2.0, rel=1e-6)


def test_duration_nodes_keep_the_median_and_collapse_without_spread():
    nodes = duration_nodes(90.0, 0.3, 20.0)
    assert 70.0 in nodes and len(nodes) == len(NODE_Z) and np.all(np.diff(nodes) > 0)
    assert list(duration_nodes(90.0, 0.0, 20.0)) == [70.0]


def test_sampled_minutes_carry_nearly_all_per_case_variance():
    # The year's spread per type follows its sampled minutes by the regression slope; the
    # per-case variance that slope leaves out stays small for the demo mix.
    for name in ("baseline_2l.toml", "proposal_half_litre.toml"):
        assert year_inputs(load_scenario(YEAR / name)).variance_explained > 0.98


def test_target_mode_case_type_of_the_demo_runs_through_the_circle_model():
    base = load_scenario(YEAR / "baseline_2l.toml")
    t = next(t for t in base.case_mix.types if t.name == "Emergency laparotomy")
    assert t.plan.phases[t.stretch_index].target_mac == 1.0
    # Without spread, the type's cases all last the median: per case the year uses what
    # compute_case of the plan uses (agent shares: sevoflurane 0.9, desflurane 0.1).
    only = replace(t, spread=0.0, agent_shares={"sevoflurane": 1.0})
    result = compute_year(replace(base, case_mix=replace(base.case_mix, types=(only,))), draws=20)
    c = _case_at(t.plan, t.median_min, t.stretch_index)
    per_case = result.per_case
    assert per_case["liquid_ml_sevoflurane"] == pytest.approx(c["liquid_agent_ml"], rel=1e-9)
    assert per_case["emitted_kg_sevoflurane"] * 1000 == pytest.approx(c["agent_emitted_g"], rel=1e-9)
    assert per_case["absorbent_kg"] * 1000 == pytest.approx(c["absorbent_g"], rel=1e-9)
    assert any("end-tidal target" in n for n in result.notes)


def test_low_flow_practice_warns_of_hypoxic_inspired_o2_unless_the_o2_share_rises():
    # The textbook hypoxic case (docs/methods.md, Inspired oxygen): 0.5 L/min with about 50 % O2 while the
    # patient consumes about 0.25 L/min O2; the year reports it from the circle model. With
    # 80 % of the flow as O2 the steady-state balance keeps inspired O2 above 30 %.
    base = load_scenario(YEAR / "baseline_2l.toml")
    lean = compute_year(base.with_practice(maintenance_flow_l_min=0.5), draws=10).warnings
    assert any("changed practice, sevoflurane: predicted inspired O2 falls to" in w for w in lean)
    rich = compute_year(base.with_practice(maintenance_flow_l_min=0.5, maintenance_o2_share=0.8), draws=10).warnings
    assert not any("changed practice, sevoflurane: predicted inspired O2" in w for w in rich)
    assert any("changed practice, sevoflurane, maintenance: 0.50 L/min is under" in w for w in rich)


def test_o2_share_splits_the_practice_flow():
    base = load_scenario(YEAR / "proposal_half_litre.toml")
    assert base.practice.maintenance_o2_share == pytest.approx(0.8)
    t = base.case_mix.types[0]
    plan, _ = practised_plan(t, base)
    m = plan.phases[t.stretch_index]
    assert (m.oxygen_l_min, m.air_l_min, m.nitrous_oxide_l_min) == pytest.approx((0.4, 0.1, 0.0))
    with pytest.raises(InputError, match="practice.maintenance_o2_share"):
        parse_scenario_text(
            'case_mix = "fernhollow_casemix.csv"\n[practice]\nmaintenance_o2_share = 1.5\n', "s.toml", YEAR
        )


def test_plans_with_different_phase_layouts_share_a_call_without_changing_their_cases():
    # A plan with an extra phase before maintenance is padded against the others in the
    # agent's one simulate_cases call; each type still equals compute_case at its median.
    plan = load_plan(PLANS / "lap_chole_low_flow.toml")
    extra = replace(
        plan,
        phases=(
            replace(plan.phases[0], name="pre-oxygenation", minutes=3.0, oxygen_l_min=6.0, air_l_min=0.0, dial_pct=0.0),
        )
        + plan.phases,
    )
    plans = {"a.toml": plan, "b.toml": extra}
    mix = parse_case_mix_text(
        HEADER + "A,100,90,0,1,0,0,0,a.toml\nB,50,90,0,1,0,0,0,b.toml\n", "mix", lambda name, where: plans[name]
    )
    year = compute_year(Scenario("layouts", mix, sampling=Sampling(draws=5))).totals
    want = {"liquid_agent_ml": 0.0, "oxygen_l": 0.0, "absorbent_g": 0.0, "agent_emitted_g": 0.0}
    for t in mix.types:
        c = _case_at(t.plan, t.median_min, t.stretch_index)
        for k in want:
            want[k] += t.cases_per_year * c[k]
    assert mix.types[1].stretch_index == 2
    assert year["liquid_ml_sevoflurane"] == pytest.approx(want["liquid_agent_ml"], rel=1e-12)
    assert year["oxygen_l"] == pytest.approx(want["oxygen_l"], rel=1e-12)
    assert year["absorbent_kg"] * 1000 == pytest.approx(want["absorbent_g"], rel=1e-12)
    assert year["emitted_kg_sevoflurane"] * 1000 == pytest.approx(want["agent_emitted_g"], rel=1e-4)


def test_a_dial_above_the_vaporizer_maximum_in_use_names_the_case_type(tmp_path):
    plan = tmp_path / "deep.toml"
    plan.write_text(
        (PLANS / "lap_chole_high_flow.toml").read_text(encoding="utf-8").replace('dial = "2 %"', 'dial = "9 %"'),
        encoding="utf-8",
    )
    assert 'dial = "9 %"' in plan.read_text(encoding="utf-8")
    mix = parse_case_mix_text(HEADER + f"Deep,10,60,0,1,0,0,0,{plan}\n", "mix", lambda name, where: load_plan(name))
    scenario = Scenario("deep", mix, sampling=Sampling(draws=5))
    with pytest.raises(InputError, match=r"case type 'Deep'.*phases\[\d\]\.dial: got '9 %'.*up to 8 %"):
        compute_year(scenario)
    # With a 10 % vaporizer in the values in use, the same mix is worked out.
    wide = DEFAULT_REFERENCE.with_overrides({"agents": {"sevoflurane": {"vaporizer_max": 10}}}, "local.toml")
    t = mix.types[0]
    fixed = sum(ph.minutes for j, ph in enumerate(t.plan.phases) if j != t.stretch_index)
    case = compute_case(t.plan.with_phase(t.stretch_index, minutes=60 - fixed), wide).totals
    # A year with fixed durations is each case x its count (as in the sum-of-types check above).
    assert compute_year(scenario, wide).totals["liquid_ml_sevoflurane"] == pytest.approx(
        10 * case["liquid_agent_ml"], rel=1e-6
    )


def test_a_slow_end_tidal_target_is_a_caution_of_the_year_as_of_the_case(tmp_path):
    plan = load_plan(YEAR / "plans" / "adult_target_2l.toml")
    # A light wash-in, then a deeper target at 0.5 L/min: the slow response of low flow.
    slow = plan.with_phase(0, dial_pct=1.0).with_phase(1, oxygen_l_min=0.3, air_l_min=0.2, target_mac=1.2)
    mix = parse_case_mix_text(HEADER + "Slow,10,108,0,1,0,0,0,slow.toml\n", "mix", lambda name, where: slow)
    # The case type's plan carries the mix's patient (default band), so compare with that case.
    case_caution = [w for w in compute_case(mix.types[0].plan).warnings if "only after" in w]
    assert case_caution, "the single case must show the slow target first"
    year = compute_year(Scenario("slow", mix, sampling=Sampling(draws=5)))
    year_caution = [w for w in year.warnings if "only after" in w]
    assert len(year_caution) == 1 and "Slow" in year_caution[0] and "1.2 MAC" in year_caution[0]
    # The same minutes as the case (same physics, same phase lengths: 8 + 90 + 10 = 108 min).
    minutes = lambda text: text.split("only after ")[1].split(" min")[0]  # noqa: E731
    assert minutes(year_caution[0]) == minutes(case_caution[0])
    # A target reached at once gives no such caution.
    assert not [
        w
        for w in compute_year(
            Scenario(
                "fast",
                parse_case_mix_text(HEADER + "Fast,10,108,0,1,0,0,0,fast.toml\n", "mix", lambda name, where: plan),
                sampling=Sampling(draws=5),
            )
        ).warnings
        if "only after" in w
    ]


def test_a_scenario_written_out_reads_back_the_same():
    """Issue 12 defects 6 and 12: exports and the store keep a scenario exactly as run."""
    from dataclasses import replace as _replace

    from model.io.scenario import load_scenario, parse_scenario_text, scenario_to_toml

    demo = Path(__file__).resolve().parents[3] / "demo_data" / "year"
    base = load_scenario(demo / "proposal_half_litre.toml")
    edited = base.with_practice(maintenance_flow_l_min=0.8, dial_factor=1.25)
    edited = _replace(edited, sampling=_replace(edited.sampling, seed=7))
    again = parse_scenario_text(scenario_to_toml(edited, "fernhollow_casemix.csv"), "again", demo)
    assert again.practice == edited.practice and again.sampling == edited.sampling
    assert dict(again.prices) == dict(edited.prices) and again.name == edited.name
    assert again.month_weights == edited.month_weights and again.car_kg_per_km == edited.car_kg_per_km
