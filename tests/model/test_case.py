"""Per-case results: consumption, emissions, cost and MAC-hours against hand-worked numbers."""

import json
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest

from model.case import case_costs, compute_case, phase_consumption
from model.emissions import co2e_kg, emitted_mass_g, gas_mass_g
from model.io.plans import load_plan
from model.plan import CasePlan, Patient, Phase, Settings
from model.reference import AGENTS, DEFAULT_REFERENCE, Prices, Reference

DEMO = Path(__file__).resolve().parents[2] / "demo_data" / "plans"
SEVO = AGENTS["sevoflurane"]


def one_phase_plan(agent="sevoflurane", minutes=60.0, o2=1.0, air=1.0, n2o=0.0, dial=2.0, age=40.0, **settings):
    return CasePlan(
        "t", agent, (Phase("p", minutes, o2, air, n2o, dial_pct=dial),), Patient(70.0, age), Settings(**settings)
    )


def test_low_flow_demo_case_hand_worked():
    result = compute_case(load_plan(DEMO / "lap_chole_low_flow.toml"))
    t = result.totals
    # Worked by hand (Dion's formula at 20 °C, docs/methods.md, Dion's formula):
    #   vapour = 6000 mL/min * 6 % * 10 min + 500 mL/min * 3 % * 75 min + 0 = 3600 + 1125 = 4725 mL
    #   vapour per mL of sevoflurane = 1.52 / 200.05 * 24055 = 182.77
    #   liquid = 4725 / 182.77 = 25.852 mL; mass = 25.852 * 1.52 = 39.295 g
    assert t["liquid_agent_ml"] == pytest.approx(25.852, rel=1e-3)
    assert t["agent_mass_g"] == pytest.approx(39.295, rel=1e-3)
    # Gases: O2 2*10 + 0.3*75 + 6*10 = 102.5 L; air 4*10 + 0.2*75 = 55 L.
    assert t["oxygen_l"] == pytest.approx(102.5)
    assert t["air_l"] == pytest.approx(55.0)
    assert t["nitrous_oxide_l"] == 0.0
    assert t["duration_min"] == 95.0
    # Invented demo prices (GBP 120 per 250 mL bottle, O2 3 and air 2 per 1000 L):
    #   agent 25.852 / 250 * 120 = 12.409; O2 0.1025 * 3 = 0.3075; air 0.055 * 2 = 0.11.
    assert t["cost_agent"] == pytest.approx(12.409, rel=1e-3)
    assert t["cost_oxygen"] == pytest.approx(0.3075)
    assert t["cost_air"] == pytest.approx(0.11)
    assert t["bottles"] == pytest.approx(25.852 / 250, rel=1e-3)
    # Source: IPCC AR6 WG1 Ch. 7 (sevoflurane GWP100 195, from memory): CO2e = emitted kg x 195.
    assert t["co2e_agent_kg"] == pytest.approx(t["agent_emitted_g"] / 1000 * 195.0)
    assert t["agent_emitted_g"] <= t["agent_mass_g"]
    assert result.currency == "GBP" and result.gwp_source == "ar6_gwp100"


def test_high_flow_costs_more_than_low_flow():
    low = compute_case(load_plan(DEMO / "lap_chole_low_flow.toml")).totals
    high = compute_case(load_plan(DEMO / "lap_chole_high_flow.toml")).totals
    for key in ("liquid_agent_ml", "co2e_total_kg", "cost_total", "oxygen_l"):
        assert high[key] > low[key], key


def test_nitrous_oxide_mass_and_co2e_hand_worked():
    # Worked by hand: 1 L N2O at 20 °C, 101.325 kPa is 44.013 / 24.055 = 1.8297 g.
    assert gas_mass_g(1.0, AGENTS["nitrous_oxide"].molar_mass) == pytest.approx(1.8297, rel=1e-4)
    # Desflurane case with N2O: 2 L/min N2O for 60 min = 120 L = 219.56 g;
    # Source: globalwarmingpotentials (PyPI) / IPCC AR6: N2O GWP100 273 -> 59.94 kg CO2e.
    plan = one_phase_plan("desflurane", o2=1.0, air=0.0, n2o=2.0, dial=4.0)
    t = compute_case(plan).totals
    assert t["nitrous_oxide_l"] == pytest.approx(120.0)
    assert t["nitrous_oxide_emitted_g"] == pytest.approx(219.56, rel=1e-3)
    assert t["co2e_nitrous_oxide_kg"] == pytest.approx(59.94, rel=1e-3)


def test_gwp_source_changes_co2e_by_the_ratio_of_gwps():
    plan = one_phase_plan("desflurane", dial=6.0)
    a = compute_case(plan).totals["co2e_agent_kg"]
    b = compute_case(replace(plan, settings=Settings(gwp_source="ar6_gwp20"))).totals["co2e_agent_kg"]
    # Source: globalwarmingpotentials (PyPI): desflurane (HFE-236ea2) AR6 GWP20 7020, GWP100 2590.
    assert b / a == pytest.approx(7020 / 2590)


def test_capture_efficiency_scales_agent_emissions():
    base = compute_case(one_phase_plan()).totals
    half = compute_case(one_phase_plan(capture_efficiency=0.5)).totals
    assert half["agent_emitted_g"] == pytest.approx(base["agent_emitted_g"] * 0.5)
    assert half["co2e_agent_kg"] == pytest.approx(base["co2e_agent_kg"] * 0.5)
    assert half["liquid_agent_ml"] == base["liquid_agent_ml"]  # capture does not change use


def test_emitted_mass_less_metabolised_uptake_and_capture():
    # Worked by hand: (100 g - 0.03 * 40 g) * (1 - 0.2) = 98.8 * 0.8 = 79.04 g.
    assert emitted_mass_g(100.0, 40.0, 0.03, 0.2) == pytest.approx(79.04)
    # metabolism can never remove more than was delivered
    assert emitted_mass_g(1.0, 100.0, 0.5) == 0.0
    assert emitted_mass_g(np.array([10.0, 20.0])).tolist() == [10.0, 20.0]


def test_co2e_is_mass_times_gwp():
    # Source: IPCC AR6 WG1 Ch. 7 (CO2e = mass x GWP): 1000 g x 273 = 273 kg CO2e.
    assert co2e_kg(1000.0, 273.0) == pytest.approx(273.0)


def test_case_costs_hand_worked():
    prices = Prices(
        currency="EUR",
        bottle={"isoflurane": 25.0},
        oxygen_per_1000_l=4.0,
        air_per_1000_l=2.0,
        nitrous_oxide_per_1000_l=10.0,
        absorbent_per_kg=8.0,
    )
    costs = case_costs(50.0, 500.0, 250.0, 100.0, 750.0, AGENTS["isoflurane"], prices)
    # Worked by hand: 50/250*25 = 5; 0.5*4 = 2; 0.25*2 = 0.5; 0.1*10 = 1; 0.75*8 = 6; total 14.5.
    assert {k: float(v) for k, v in costs.items()} == pytest.approx(
        dict(agent=5.0, oxygen=2.0, air=0.5, nitrous_oxide=1.0, absorbent=6.0, total=14.5)
    )


def test_mac_hours_age_adjusted():
    # Source: Mapleson WW, Br J Anaesth 1996;76:179-85 (abstract): sevoflurane at its MAC40
    # (1.80 %) for 60 min at age 40 is 1 MAC-hour.
    t40 = compute_case(one_phase_plan(dial=1.8)).totals
    assert t40["mac_hours"] == pytest.approx(1.0)
    # Source: Mapleson 1996: at 80 years MAC is MAC40 * 10^-0.1076, so the same dial is
    # 10^0.1076 = 1.2811 MAC-hours.
    t80 = compute_case(one_phase_plan(dial=1.8, age=80.0)).totals
    assert t80["mac_hours"] == pytest.approx(10**0.1076)


def test_mac_hours_count_nitrous_oxide():
    # Source: Mapleson 1996 (abstract): 1 L/min O2 + 1 L/min N2O: 50 % N2O = 50/104 MAC at
    # 40, plus 0.9/1.80 sevoflurane.
    t = compute_case(one_phase_plan(o2=1.0, air=0.0, n2o=1.0, dial=0.9)).totals
    assert t["mac_hours"] == pytest.approx(0.5 + 50 / 104)


def test_ratio_limit_alters_request_and_warns():
    result = compute_case(one_phase_plan("desflurane", o2=0.5, air=0.0, n2o=2.0, dial=5.0))
    row = result.phases.iloc[0]
    assert row["nitrous_oxide_l_min"] == pytest.approx(1.5) and bool(row["flows_altered"])
    assert any("ratio limit altered" in w for w in result.warnings)
    raised = compute_case(one_phase_plan("desflurane", o2=0.5, air=0.0, n2o=2.0, dial=5.0, ratio_behaviour="raise_o2"))
    assert raised.phases.iloc[0]["oxygen_l_min"] == pytest.approx(2.0 / 3.0)


def test_low_sevoflurane_flow_warns():
    result = compute_case(one_phase_plan(o2=0.3, air=0.2, dial=3.0))
    assert any("under the set minimum of 1 L/min" in w for w in result.warnings)
    ok = compute_case(one_phase_plan(o2=1.0, air=1.0, dial=2.0))
    assert not any("minimum" in w for w in ok.warnings)


def test_fresh_gas_oxygen_under_the_floor_warns():
    # Worked by hand: 0.1 L/min O2 + 1.9 L/min air gives (0.1 + 0.20946 * 1.9) / 2 = 24.9 % O2,
    # under the default floor of 30 %.
    result = compute_case(one_phase_plan(o2=0.1, air=1.9, dial=2.0))
    assert result.totals["min_fd_o2_pct"] == pytest.approx(24.9, abs=0.05)
    assert any("30 %" in w and "floor" in w for w in result.warnings)


def test_price_override_from_settings_changes_cost_only():
    plan = one_phase_plan()
    ref = Reference().with_overrides({"prices": {"bottle": {"sevoflurane": 240.0}}}, "s.toml")
    base = compute_case(plan).totals
    dear = compute_case(plan, ref).totals
    assert dear["cost_agent"] == pytest.approx(base["cost_agent"] * 2)
    assert dear["co2e_total_kg"] == base["co2e_total_kg"]


def test_plan_prices_apply_to_that_plan():
    plan = replace(one_phase_plan(), prices={"currency": "EUR", "oxygen_per_1000_l": 30.0})
    result = compute_case(plan)
    assert result.currency == "EUR"
    assert result.totals["cost_oxygen"] == pytest.approx(60.0 / 1000 * 30.0)
    assert DEFAULT_REFERENCE.prices.currency == "GBP"


def test_result_dict_is_json_with_stable_keys():
    data = compute_case(load_plan(DEMO / "hip_desflurane_n2o.toml")).to_dict()
    text = json.dumps(data, allow_nan=False)
    back = json.loads(text)
    assert {"plan", "agent", "currency", "gwp_source", "gwp_source_label", "totals", "phases", "warnings"} <= set(back)
    for key in (
        "liquid_agent_ml",
        "agent_mass_g",
        "oxygen_l",
        "air_l",
        "nitrous_oxide_l",
        "co2e_total_kg",
        "cost_total",
        "mac_hours",
        "duration_min",
    ):
        assert isinstance(back["totals"][key], float), key
    assert len(back["phases"]) == 3


def test_phase_consumption_vectorises_over_many_rows():
    n = 1000
    rng = np.random.default_rng(1)
    t, o2, air = rng.uniform(1, 60, n), rng.uniform(0.2, 3, n), rng.uniform(0, 3, n)
    dial = rng.uniform(0, 3, n)
    c = phase_consumption(t, o2, air, 0.0, dial, SEVO)
    assert c["liquid_ml"].shape == (n,)
    one = phase_consumption(t[:1], o2[:1], air[:1], 0.0, dial[:1], SEVO)
    assert c["liquid_ml"][0] == pytest.approx(one["liquid_ml"][0])


def test_warnings_are_ranked_hazard_first_with_a_severity_each():
    """Issue 12 defect 4: a hypoxic mixture and O2 running out come before labelling notes."""
    from model.cautions import SEVERITIES, is_unsafe, severity_of

    plan = load_plan(DEMO / "lap_chole_low_flow.toml")
    # 0.5 L/min maintenance at 50 % O2: the textbook steady-state FiO2 mass balance
    # (FGF x FdO2 - VO2) / (FGF - VO2 - ...) has a numerator near zero at VO2 ~ 0.25 L/min.
    phases = tuple(
        replace(p, oxygen_l_min=0.25, air_l_min=0.25, nitrous_oxide_l_min=0.0) if p.name == "maintenance" else p
        for p in plan.phases
    )
    result = compute_case(replace(plan, phases=phases))
    severities = [severity_of(w) for w in result.warnings]
    assert severities and severities[0] == "hazard" and "labelling" in severities
    assert severities == sorted(severities, key=SEVERITIES.index)
    assert is_unsafe(result.warnings) and result.to_dict()["unsafe"] is True
    assert result.to_dict()["warnings_by_severity"][0]["severity"] == "hazard"


def test_end_tidal_mac_hours_per_phase_add_up_and_lie_under_the_dial_based_figure():
    """Issue 12 defect 8: both MAC-hours are reported; the end-tidal ones per phase too."""
    result = compute_case(load_plan(DEMO / "lap_chole_high_flow.toml"))
    t, ph = result.totals, result.phases
    # The phases' end-tidal MAC-hours add up to the case's (the same integral over the minute
    # grid against the simulation's own steps; arithmetic).
    assert ph["end_tidal_mac_hours"].sum() == pytest.approx(t["end_tidal_mac_hours"], rel=0.02)
    # Published FA/FI wash-in curves (Eger, Anesthetic Uptake and Action, 1974): alveolar agent
    # stays under inspired while the patient takes it up, so end-tidal MAC-hours are under the
    # dial-based ones at a dial held through the case.
    assert 0 < t["end_tidal_mac_hours"] < t["mac_hours"]
