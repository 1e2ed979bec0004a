"""The circle system with a patient.

Conservation, limits, steady states, targets, absorbent, inspired O2 and the per-case result built on it.
"""

import json
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest

from model import compute_case, load_plan
from model.circle import lowest_safe_fd_o2, rebreathed_share, simulate_cases, steady_state_fio2
from model.cli import main
from model.io.plans import parse_plan_text
from model.mac import mac_at_age
from model.plan import CasePlan, Patient, Phase, Settings
from model.reference import AIR_O2_FRACTION, DEFAULT_REFERENCE, VOLATILES

DEMO = Path(__file__).resolve().parents[2] / "demo_data" / "plans"
SEVO = DEFAULT_REFERENCE.volatile("sevoflurane")
SPECIES = ("oxygen", "nitrous_oxide", "agent")
FOUNDATION_KEYS = (
    "duration_min",
    "liquid_agent_ml",
    "bottles",
    "agent_mass_g",
    "oxygen_l",
    "air_l",
    "nitrous_oxide_l",
    "absorbent_g",
    "agent_uptake_g",
    "agent_emitted_g",
    "nitrous_oxide_emitted_g",
    "co2e_agent_kg",
    "co2e_nitrous_oxide_kg",
    "co2e_total_kg",
    "cost_agent",
    "cost_oxygen",
    "cost_air",
    "cost_nitrous_oxide",
    "cost_absorbent",
    "cost_total",
    "mac_hours",
    "min_fd_o2_pct",
)
TIMECOURSE_COLUMNS = (
    "time_min",
    "phase",
    "dial_pct",
    "inspired_agent_pct",
    "end_tidal_agent_pct",
    "end_tidal_mac",
    "inspired_o2_pct",
    "end_tidal_o2_pct",
    "inspired_n2o_pct",
    "end_tidal_n2o_pct",
    "agent_uptake_ml_min",
    "agent_vented_ml_min",
    "liquid_agent_cumulative_ml",
    "co2_absorbed_cumulative_l",
    "absorbent_used_cumulative_g",
)


def o2_air_for(fd_o2, fgf):
    """O2 and air flows giving a fresh gas O2 fraction (air 20.946 % O2)."""
    o2 = fgf * (fd_o2 - AIR_O2_FRACTION) / (1 - AIR_O2_FRACTION)
    return o2, fgf - o2


def balance_errors(sim):
    out = {}
    for s in SPECIES:
        d = sim[f"{s}_delivered_l"]
        rest = sim[f"{s}_uptake_l"] + sim[f"{s}_vented_l"] + sim[f"{s}_held_end_l"] - sim[f"{s}_held_start_l"]
        out[s] = np.max(np.abs(d - rest) / np.maximum(np.abs(d) + sim[f"{s}_held_start_l"], 1e-12))
    return out


ADULT = Patient(70.0, 40.0)


def plan(phases, agent="sevoflurane", patient=ADULT, **settings):
    return CasePlan("test", agent, tuple(phases), patient, replace(Settings(), **settings))


# --- conservation ---------------------------------------------------------------------------


@pytest.mark.parametrize("model", ["compartment", "lowe"])
def test_agent_o2_and_n2o_are_conserved_over_mixed_cases(model):
    rng = np.random.default_rng(7)
    n = 200
    minutes = rng.uniform(1, 90, (3, n))
    o2 = rng.uniform(0.2, 4, (3, n))
    n2o = rng.uniform(0, 3, (3, n)) * (rng.random((3, n)) < 0.5)
    air = rng.uniform(0, 3, (3, n))
    dial = np.where(rng.random((3, n)) < 0.5, rng.uniform(0, 8, (3, n)), np.nan)
    target = np.where(np.isnan(dial), rng.uniform(0, 2, (3, n)), np.nan)
    sim = simulate_cases(
        SEVO,
        minutes,
        o2,
        air,
        n2o,
        dial,
        target,
        weight_kg=rng.uniform(5, 120, n),
        age_years=rng.uniform(1, 90, n),
        uptake_model=model,
    )
    # Source: conservation of mass (delivered = taken up + vented + change held), docs/methods.md, The circle system
    for species, err in balance_errors(sim).items():
        assert err < 1e-6, species


def test_demo_plans_conserve_mass_in_the_case_result():
    for path in sorted(DEMO.glob("*.toml")):
        t = compute_case(load_plan(path)).totals
        # Source: conservation of mass, to rounding error
        assert t["conservation_error_rel"] < 1e-6, path.name


# --- limits -------------------------------------------------------------------------------


def test_high_flow_inspired_equals_delivered():
    o2, air = o2_air_for(0.5, 20.0)
    sim = simulate_cases(SEVO, [[20.0]], [[o2]], [[air]], 0.0, [[2.0]], record=True)
    s = sim["series"]
    # Source: common practice, no source: at FGF far above minute ventilation the circle
    # behaves as a non-rebreathing system, inspired = delivered (the one well-mixed circuit
    # of the model keeps a little exhaled gas: within 5 % at 20 L/min, see DEVELOPERS.md)
    assert s["inspired_agent"][-1, 0] == pytest.approx(0.02, rel=0.05)
    assert s["inspired_agent"][-1, 0] <= 0.02
    assert s["inspired_o2"][-1, 0] == pytest.approx(0.5, abs=0.02)
    assert sim["phase_rebreathed_share"][0, 0] == 0.0


def test_closed_circuit_vents_nothing():
    # FGF of pure O2 equal to the O2 consumption, no agent: a closed circuit.
    sim = simulate_cases(SEVO, [[60.0]], [[0.25]], 0.0, 0.0, [[0.0]], vo2_ml_min=250.0, record=True)
    for s in SPECIES:
        # Source: common practice, no source: in a closed circuit all fresh gas is taken up
        assert sim[f"{s}_vented_l"][0] == 0.0
    assert sim["phase_rebreathed_share"][0, 0] == pytest.approx(1 - 0.25 / sim["minute_ventilation_l_min"][0])


def test_rebreathed_share_worked_points():
    # Source: common practice, no source: fresh gas displaces an equal volume of exhaled gas
    assert rebreathed_share([0.5, 3.0, 6.0, 10.0], 6.0).tolist() == pytest.approx([11 / 12, 0.5, 0.0, 0.0])


# --- inspired O2 --------------------------------------------------------------------------


def test_steady_state_fio2_at_worked_points():
    # Source: docs/methods.md, Inspired oxygen: textbook circle mass balance
    # FiO2 = (FGF FdO2 - VO2)/(FGF - VO2 - VN2O - Vagent);
    # hand-worked: (1 x 0.5 - 0.25)/(1 - 0.25) = 1/3; (2 x 0.35 - 0.28)/(2 - 0.28) = 0.2442
    assert steady_state_fio2(1.0, 0.5, 0.25) == pytest.approx(1 / 3)
    assert steady_state_fio2(2.0, 0.35, 0.28) == pytest.approx(0.42 / 1.72)
    # with 0.1 L/min N2O uptake: (1 x 0.5 - 0.25)/(1 - 0.25 - 0.1) = 0.3846
    assert steady_state_fio2(1.0, 0.5, 0.25, 0.1) == pytest.approx(0.25 / 0.65)
    # Source: docs/methods.md, Inspired oxygen: at 0.5 L/min, 50 % O2, VO2 0.25 L/min the numerator is zero
    assert steady_state_fio2(0.5, 0.5, 0.25) == 0.0


def test_simulation_settles_on_the_steady_state_balance():
    o2, air = o2_air_for(0.5, 1.0)
    sim = simulate_cases(SEVO, [[600.0]], [[o2]], [[air]], 0.0, [[0.0]], vo2_ml_min=250.0, record=True)
    # Source: docs/methods.md, Inspired oxygen: steady-state balance, hand-worked 1/3 for 1 L/min, 50 % O2, VO2 0.25
    assert sim["series"]["inspired_o2"][-1, 0] == pytest.approx(1 / 3, abs=0.002)
    assert sim["phase_steady_fio2"][0, 0] == pytest.approx(1 / 3, abs=1e-9)


def test_lowest_safe_fd_o2_at_worked_points():
    # Source: docs/methods.md, Inspired oxygen: the balance solved for FdO2: (VO2 + floor (FGF - VO2)) / FGF;
    # hand-worked (0.25 + 0.3 x 0.75) / 1 = 0.475
    assert lowest_safe_fd_o2(1.0, 0.25, 0.30) == pytest.approx(0.475)
    assert np.isnan(lowest_safe_fd_o2(0.2, 0.25, 0.30))
    o2, air = o2_air_for(0.475, 1.0)
    sim = simulate_cases(SEVO, [[900.0]], [[o2]], [[air]], 0.0, [[0.0]], vo2_ml_min=250.0, record=True)
    assert sim["series"]["inspired_o2"][-1, 0] == pytest.approx(0.30, abs=0.003)


def test_the_hypoxic_case_is_flagged():
    o2, air = o2_air_for(0.5, 0.5)
    p = plan([Phase("maintenance", 60.0, o2, air, 0.0, dial_pct=2.0)], patient=Patient(70.0, 40.0, vo2_ml_min=250.0))
    r = compute_case(p)
    # Source: docs/methods.md, Inspired oxygen: 0.5 L/min, 50 % O2, VO2 0.25 L/min becomes hypoxic
    assert r.totals["inspired_o2_below_floor"] is True
    assert r.totals["min_inspired_o2_pct"] < 21.0
    assert any("hypoxic" in w for w in r.warnings)
    assert any("keeps inspired O2 above" in w for w in r.warnings)
    assert r.phases["lowest_safe_fd_o2_pct"].iloc[0] == pytest.approx((0.25 + 0.3 * 0.25) / 0.5 * 100)


def test_o2_consumption_beyond_supply_is_reported_not_made_negative():
    p = plan([Phase("maintenance", 120.0, 0.1, 0.0, 0.0, dial_pct=1.0)])
    r = compute_case(p)
    assert r.totals["o2_shortfall_l"] > 0
    assert r.timecourse["inspired_o2_pct"].min() >= 0.0
    assert any("runs out of O2" in w for w in r.warnings)


def test_n2o_accumulates_at_low_flow_and_lowers_inspired_o2():
    low = compute_case(plan([Phase("m", 90.0, 0.3, 0.0, 0.7, dial_pct=1.0)])).timecourse
    high = compute_case(plan([Phase("m", 90.0, 1.8, 0.0, 4.2, dial_pct=1.0)])).timecourse
    # Source: docs/methods.md, Inspired oxygen (N2O accumulates in the circle at low flow; hypoxic mixture risk)
    assert low["inspired_o2_pct"].iloc[-1] < high["inspired_o2_pct"].iloc[-1] - 2.0
    # Source: docs/methods.md, Inspired oxygen: the balance, hand-worked
    # (6 x 0.3 - 0.242) / (6 - 0.242) = 27.1 % (N2O uptake late in the case raises it slightly)
    assert high["inspired_o2_pct"].iloc[-1] == pytest.approx(27.1, abs=1.0)


# --- wash-in ------------------------------------------------------------------------------


def fa_fi_at_30_min(agent_name):
    if agent_name == "nitrous_oxide":
        sim = simulate_cases(SEVO, [[30.0]], [[3.0]], 0.0, [[5.0]], [[0.0]], record=True)
        s = sim["series"]
        return s["end_tidal_n2o"][-1, 0] / s["inspired_n2o"][-1, 0]
    agent = DEFAULT_REFERENCE.volatile(agent_name)
    sim = simulate_cases(agent, [[30.0]], [[8.0]], 0.0, 0.0, [[agent.mac40 / 2]], record=True)
    s = sim["series"]
    return s["end_tidal_agent"][-1, 0] / s["inspired_agent"][-1, 0]


# Source: Yasuda N, Lockhart SH, Eger EI II et al. Kinetics of desflurane, isoflurane and
# halothane in humans. Anesthesiology 1991;74:489-98, and Yasuda N et al. Comparison of
# kinetics of sevoflurane and isoflurane in humans. Anesth Analg 1991;72:316-24: FA/FI at
# 30 min about 0.9 for N2O and desflurane, 0.85 sevoflurane, 0.73 isoflurane, 0.58 halothane
# (values and ranges from memory).
PUBLISHED_FA_FI_30 = {
    "nitrous_oxide": (0.85, 1.0),
    "desflurane": (0.85, 0.95),
    "sevoflurane": (0.80, 0.90),
    "isoflurane": (0.66, 0.80),
    "halothane": (0.50, 0.68),
}


def test_wash_in_order_matches_published_kinetics():
    values = {a: fa_fi_at_30_min(a) for a in PUBLISHED_FA_FI_30}
    for agent, (low, high) in PUBLISHED_FA_FI_30.items():
        assert low <= values[agent] <= high, (agent, values[agent])
    # Source: Yasuda et al. 1991 (above): N2O and desflurane fastest, then sevoflurane, isoflurane, halothane
    assert (
        min(values["nitrous_oxide"], values["desflurane"])
        > values["sevoflurane"]
        > values["isoflurane"]
        > values["halothane"]
    )


# --- targets ------------------------------------------------------------------------------


def test_target_mode_meets_the_age_adjusted_end_tidal_target():
    p = plan([Phase("maintenance", 60.0, 1.0, 1.0, 0.0, target_mac=1.0)], patient=Patient(70.0, 80.0))
    r = compute_case(p)
    mac80 = float(mac_at_age(SEVO.mac40, 80.0))
    # Source: Mapleson WW, Br J Anaesth 1996;76:179-85 (MAC at 80 y = MAC40 x 10^(-0.00269 x 40))
    assert r.phases["end_tidal_agent_pct"].iloc[0] == pytest.approx(mac80, rel=0.01)
    assert r.timecourse["dial_pct"].max() <= SEVO.vaporizer_max + 1e-12
    assert r.phases["time_to_target_min"].iloc[0] < 5.0


def test_n2o_adds_its_mac_share_to_the_target():
    p = plan([Phase("maintenance", 60.0, 1.0, 0.0, 2.0, target_mac=1.0)])
    r = compute_case(p)
    tc = r.timecourse.iloc[-1]
    mac_agent = float(mac_at_age(SEVO.mac40, 40.0))
    mac_n2o = float(mac_at_age(DEFAULT_REFERENCE.agents["nitrous_oxide"].mac40, 40.0))
    # Source: Mapleson 1996 (MAC fractions of agent and N2O add)
    assert tc["end_tidal_agent_pct"] / mac_agent + tc["end_tidal_n2o_pct"] / mac_n2o == pytest.approx(1.0, rel=0.01)
    assert tc["end_tidal_agent_pct"] < 0.6 * mac_agent


def test_unreachable_target_is_reported():
    o2, air = o2_air_for(0.6, 0.3)
    p = plan([Phase("maintenance", 20.0, o2, air, 0.0, target_mac=1.5)], agent="desflurane")
    r = compute_case(p)
    assert np.isnan(r.phases["time_to_target_min"].iloc[0])
    assert r.totals["targets_not_reached"] == 1.0
    assert r.phases["time_at_max_below_target_min"].iloc[0] > 10.0
    assert any("not reached" in w for w in r.warnings)


def test_lower_flow_is_slower_to_reach_a_new_target():
    def time_to_target(fgf):
        o2, air = o2_air_for(0.5, fgf)
        p = plan(
            [
                Phase("induction", 15.0, 3.0, 3.0, 0.0, target_mac=0.6),
                Phase("deeper", 60.0, o2, air, 0.0, target_mac=1.2),
            ],
            agent="isoflurane",
        )
        return compute_case(p).phases["time_to_target_min"].iloc[1]

    times = [time_to_target(f) for f in (0.5, 1.0, 2.0, 6.0)]
    # Source: common practice, no source: at low flow the circle responds slowly to a change
    assert times == sorted(times, reverse=True)
    assert times[0] > times[-1]


# --- absorbent and emissions -----------------------------------------------------------


def test_absorbent_from_the_rebreathed_co2_at_a_worked_point():
    p = plan(
        [Phase("maintenance", 60.0, 0.5, 0.0, 0.0, dial_pct=2.0)],
        patient=Patient(70.0, 40.0, vo2_ml_min=250.0, minute_ventilation_l_min=6.0),
        absorbent_capacity_l_per_kg=150.0,
    )
    t = compute_case(p).totals
    # Source: docs/methods.md, Absorbent: CO2 absorbed = VCO2 x rebreathed share; hand-worked
    # 0.2 L/min x (1 - 0.5/6) x 60 min = 11.0 L; at 150 L/kg (10-20 L per 100 g, from memory) 73.3 g
    assert t["co2_absorbed_l"] == pytest.approx(11.0, rel=1e-9)
    assert t["absorbent_g"] == pytest.approx(73.33, abs=0.01)
    assert t["cost_absorbent"] == pytest.approx(73.333 / 1000 * DEFAULT_REFERENCE.prices.absorbent_per_kg, rel=1e-4)


def test_emissions_subtract_the_metabolised_share_of_uptake():
    r = compute_case(load_plan(DEMO / "lap_chole_low_flow.toml"))
    t = r.totals
    # Source: docs/methods.md, Emitted mass (emitted = delivered - metabolised share of uptake);
    # sevoflurane 3 %, from memory
    assert t["agent_metabolised_g"] == pytest.approx(SEVO.metabolised_fraction * t["agent_gross_uptake_g"], rel=1e-6)
    assert t["agent_emitted_g"] == pytest.approx(t["agent_mass_g"] - t["agent_metabolised_g"], rel=1e-9)
    assert 0 < t["agent_uptake_g"] <= t["agent_gross_uptake_g"] < t["agent_mass_g"]


def test_dial_phases_use_dions_liquid_exactly():
    from model.vapour import liquid_used_ml

    r = compute_case(load_plan(DEMO / "lap_chole_high_flow.toml"))
    ph = r.phases
    # Source: Dion P, Can J Anaesth 1992;39:633-4 (liquid = FGF x dial x t x M / (V_m rho))
    expected = liquid_used_ml(ph["fgf_l_min"], ph["dial_pct"], ph["duration_min"], SEVO)
    assert ph["liquid_agent_ml"].to_numpy() == pytest.approx(np.asarray(expected), rel=1e-12)


# --- the per-case result ------------------------------------------------------------------


def test_case_result_keeps_foundation_keys_and_adds_timecourse():
    r = compute_case(load_plan(DEMO / "lap_chole_low_flow.toml"))
    for key in FOUNDATION_KEYS:
        assert key in r.totals, key
    assert tuple(r.timecourse.columns) == TIMECOURSE_COLUMNS
    assert r.timecourse["time_min"].tolist() == list(np.arange(0.0, 96.0))
    assert r.timecourse["liquid_agent_cumulative_ml"].iloc[-1] == pytest.approx(r.totals["liquid_agent_ml"])
    assert r.timecourse["absorbent_used_cumulative_g"].iloc[-1] == pytest.approx(r.totals["absorbent_g"])
    d = json.loads(json.dumps(r.to_dict(), allow_nan=False))
    assert d["uptake_model"] == "compartment"
    assert len(d["timecourse"]) == 96 and set(d["timecourse"][0]) == set(TIMECOURSE_COLUMNS)
    for key in (
        "min_inspired_o2_pct",
        "lowest_safe_fd_o2_pct",
        "slowest_time_to_target_min",
        "sevoflurane_low_flow_caution",
        "absorbent_g",
        "agent_vented_g",
    ):
        assert key in d["totals"]


def test_phase_rows_add_up_to_the_totals():
    r = compute_case(load_plan(DEMO / "hip_desflurane_n2o.toml"))
    for total, column in (
        ("co2e_total_kg", "co2e_kg"),
        ("cost_total", "cost_total"),
        ("absorbent_g", "absorbent_g"),
        ("agent_emitted_g", "agent_emitted_g"),
        ("liquid_agent_ml", "liquid_agent_ml"),
    ):
        assert r.totals[total] == pytest.approx(float(r.phases[column].sum()), rel=1e-12), total


def test_sevoflurane_low_flow_caution():
    r = compute_case(load_plan(DEMO / "lap_chole_low_flow.toml"))
    assert r.totals["sevoflurane_low_flow_caution"] is True
    # Source: sevoflurane labelling in some countries (2 L/min beyond 1 MAC-hour), from memory
    assert any("beyond 1 MAC-hour" in w for w in r.warnings)
    high = compute_case(load_plan(DEMO / "lap_chole_high_flow.toml"))
    assert high.totals["sevoflurane_low_flow_caution"] is False


def test_lowe_model_is_selectable_from_the_plan_file():
    text = (
        (DEMO / "lap_chole_low_flow.toml")
        .read_text()
        .replace(
            'inspired_o2_floor = "30 %"', 'inspired_o2_floor = "30 %"\nuptake_model = "lowe"\ncircle_volume = "4 L"'
        )
    )
    p = parse_plan_text(text)
    assert p.settings.uptake_model == "lowe" and p.settings.circle_volume_l == 4.0
    lowe = compute_case(p)
    comp = compute_case(load_plan(DEMO / "lap_chole_low_flow.toml"))
    assert lowe.uptake_model == "lowe"
    assert lowe.totals["conservation_error_rel"] < 1e-6
    assert lowe.totals["agent_uptake_g"] != comp.totals["agent_uptake_g"]


def test_bad_uptake_model_in_a_plan_exits_2(tmp_path, capsys):
    text = (
        (DEMO / "lap_chole_low_flow.toml")
        .read_text()
        .replace('inspired_o2_floor = "30 %"', 'inspired_o2_floor = "30 %"\nuptake_model = "guess"')
    )
    f = tmp_path / "bad.toml"
    f.write_text(text)
    assert main(["case", str(f)]) == 2
    err = capsys.readouterr().err
    assert "uptake_model" in err and "compartment" in err and "Traceback" not in err


def test_target_plan_runs_from_the_command_line(tmp_path, capsys):
    text = (DEMO / "lap_chole_low_flow.toml").read_text().replace('dial = "3 %"', "target = 1.0")
    f = tmp_path / "target.toml"
    f.write_text(text)
    assert main(["case", str(f), "--json"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert d["phases"][1]["mode"] == "target"
    assert d["phases"][1]["time_to_target_min"] is not None


def test_step_schedule_error_is_under_one_percent():
    for name in VOLATILES:
        agent = DEFAULT_REFERENCE.volatile(name)
        args = (
            agent,
            [[10], [75], [10]],
            [[2], [0.3], [6]],
            [[4], [0.2], [0]],
            0.0,
            [[np.nan], [np.nan], [0]],
            [[1.0], [1.0], [np.nan]],
        )
        coarse = simulate_cases(*args)
        fine = simulate_cases(*args, step_min=0.05, fine_min=1e9)
        for key in ("liquid_ml", "agent_uptake_l", "min_inspired_o2", "absorbent_g"):
            assert coarse[key][0] == pytest.approx(fine[key][0], rel=0.01), (name, key)


def test_growing_steps_keep_day_long_phases_within_one_percent():
    # Reference: the same system integrated with a uniform 0.1 min step (a numerical check,
    # no outside source). Steps past the first minutes grow with the time into the phase.
    for name in ("sevoflurane", "isoflurane"):
        agent = DEFAULT_REFERENCE.volatile(name)
        args = (
            agent,
            [[10, 10], [1440, 300]],
            [[2, 2], [0.3, 1.0]],
            [[4, 4], [0.2, 1.0]],
            0.0,
            [[np.nan, np.nan], [np.nan, 2.0]],
            [[1.0, 1.0], [1.0, np.nan]],
        )
        coarse = simulate_cases(*args)
        fine = simulate_cases(*args, step_min=0.1, fine_min=1e9)
        for key in ("liquid_ml", "agent_uptake_l", "min_inspired_o2", "absorbent_g"):
            assert coarse[key] == pytest.approx(fine[key], rel=0.01), (name, key)


def test_step_count_grows_slowly_with_phase_length():
    from model.circle import step_schedule

    def steps(minutes):
        return sum(n for _, n in step_schedule(minutes))

    # 40 fine steps, then 1 min steps to 20 min, then 5 % of the time into the phase.
    assert steps(60.0) < 80 and steps(24 * 60) < 140 and steps(150 * 24 * 60.0) < 260
    sched = step_schedule(np.array([24 * 60.0, 90.0, 5.0]))
    assert sum(dt * n for dt, n in sched) == pytest.approx([24 * 60.0, 90.0, 5.0], rel=1e-12)


@pytest.mark.parametrize("minutes", [11.25, 18.75, 30.0, 61.3, 333.0, 24 * 60.0 + 7.0])
def test_steps_of_a_phase_add_up_to_its_duration(minutes):
    # Arithmetic, no outside source: the steps of a phase cover it exactly, whatever the
    # last (merged) step, so amounts per minute integrate over the phase's own duration.
    from model.circle import step_schedule

    cases = np.array([minutes, 0.5 * minutes, 4.0])
    sched = step_schedule(cases)
    assert sum(dt * n for dt, n in sched) == pytest.approx(cases, rel=1e-12)
    assert all(np.all(dt >= 0) for dt, _ in sched)


def test_zero_duration_phases_are_skipped_per_case():
    sim = simulate_cases(SEVO, [[10.0, 10.0], [0.0, 30.0]], 2.0, 2.0, 0.0, 2.0)
    assert sim["phase_liquid_ml"][1, 0] == 0.0 and sim["phase_liquid_ml"][1, 1] > 0
    one = simulate_cases(SEVO, [[10.0]], 2.0, 2.0, 0.0, 2.0)
    assert sim["liquid_ml"][0] == pytest.approx(one["liquid_ml"][0], rel=1e-12)
