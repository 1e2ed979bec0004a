"""Benchmark: 100,000 phase rows through the consumption and emissions functions.

Runs ``model.case.phase_consumption`` (ratio limit, fresh gas fractions, Dion's formula, gas
volumes and N2O mass) followed by ``emitted_mass_g``, ``co2e_kg`` and ``case_costs`` on
100,000 random phase rows, and the same arithmetic as a plain Python loop over the rows.
Prints the median wall time of several runs of each, and their ratio. Goal: well under 1 s
for the vectorised path. No assertions (speed goals are reported, never tested).

    .venv/bin/python benchmarks/bench_phases.py [--rows 100000] [--runs 7] [--tiny] [--results DIR]

Writes its figures to benchmarks/results/bench_phases.json (benchmarks/benchresults.py).
"""

from __future__ import annotations

import argparse
import math
import statistics
import sys
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

import benchresults  # noqa: E402

from model.case import case_costs, phase_consumption  # noqa: E402
from model.emissions import co2e_kg, emitted_mass_g  # noqa: E402
from model.reference import AIR_O2_FRACTION, DEFAULT_REFERENCE, R_GAS  # noqa: E402

ROWS = 100_000
RUNS = 7
GOAL_S = 1.0


def make_rows(n, seed=1):
    """Random but plausible phase rows (invented benchmark data)."""
    rng = np.random.default_rng(seed)
    return dict(
        minutes=rng.uniform(1.0, 120.0, n),
        o2=rng.uniform(0.1, 4.0, n),
        air=rng.uniform(0.0, 4.0, n),
        n2o=np.where(rng.random(n) < 0.3, rng.uniform(0.0, 4.0, n), 0.0),
        dial=rng.uniform(0.0, 8.0, n),
    )


def vectorised(rows, agent, prices, gwp_agent, gwp_n2o, capture):
    c = phase_consumption(rows["minutes"], rows["o2"], rows["air"], rows["n2o"], rows["dial"], agent)
    agent_emitted = emitted_mass_g(c["agent_g"], 0.0, agent.metabolised_fraction, capture)
    n2o_emitted = emitted_mass_g(c["nitrous_oxide_g"], 0.0, 0.0, 0.0)
    co2e = co2e_kg(agent_emitted, gwp_agent) + co2e_kg(n2o_emitted, gwp_n2o)
    costs = case_costs(c["liquid_ml"], c["oxygen_l"], c["air_l"], c["nitrous_oxide_l"], 0.0, agent, prices)
    return c["liquid_ml"], co2e, costs["total"]


def plain_loop(rows, agent, prices, gwp_agent, gwp_n2o, capture):
    """The same arithmetic, one row at a time in plain Python (cap_n2o, 25 %, 0.2 L/min)."""
    share, cutoff = 0.25, 0.2
    ratio = (1.0 - share) / share
    vm_l = R_GAS * (20.0 + 273.15) / 101.325
    vapour_per_ml = agent.liquid_density / agent.molar_mass * vm_l * 1000.0
    m_n2o = DEFAULT_REFERENCE.agents["nitrous_oxide"].molar_mass
    bottle_price = prices.bottle.get(agent.name, 0.0) / agent.bottle_volume
    liquid_out, co2e_out, cost_out = [], [], []
    for t, o2, air, n2o_req, dial in zip(
        rows["minutes"].tolist(),
        rows["o2"].tolist(),
        rows["air"].tolist(),
        rows["n2o"].tolist(),
        rows["dial"].tolist(),
        strict=True,
    ):
        n2o = min(n2o_req, o2 * ratio)
        if o2 < cutoff:
            n2o = 0.0
        fgf = o2 + air + n2o
        _fd_o2 = (o2 + AIR_O2_FRACTION * air) / fgf if fgf > 0 else 0.0
        _altered = abs(n2o - n2o_req) > 1e-12
        liquid = fgf * 1000.0 * dial / 100.0 * t / vapour_per_ml
        agent_g = liquid * agent.liquid_density
        n2o_l = n2o * t
        n2o_g = n2o_l / vm_l * m_n2o
        emitted = agent_g * (1.0 - capture)
        co2e = emitted / 1000.0 * gwp_agent + n2o_g / 1000.0 * gwp_n2o
        cost = (
            liquid * bottle_price
            + o2 * t / 1000.0 * prices.oxygen_per_1000_l
            + air * t / 1000.0 * prices.air_per_1000_l
            + n2o_l / 1000.0 * prices.nitrous_oxide_per_1000_l
        )
        liquid_out.append(liquid)
        co2e_out.append(co2e)
        cost_out.append(cost)
    return liquid_out, co2e_out, cost_out


def median_time(fn, runs):
    times = []
    for _ in range(runs):
        start = time.perf_counter()
        fn()
        times.append(time.perf_counter() - start)
    return statistics.median(times), min(times)


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--rows", type=int, default=ROWS)
    ap.add_argument("--runs", type=int, default=RUNS)
    benchresults.add_arguments(ap)
    args = ap.parse_args(argv)
    n, runs = (1_000, 3) if args.tiny else (args.rows, args.runs)
    loop_runs = max(3, runs // 2)
    run = benchresults.new_run({"phase rows": n, "runs vectorised": runs, "runs loop": loop_runs}, args.tiny)
    rows = make_rows(n)
    agent = DEFAULT_REFERENCE.agents["sevoflurane"]
    prices = DEFAULT_REFERENCE.prices
    args_ = (rows, agent, prices, DEFAULT_REFERENCE.gwp("sevoflurane"), DEFAULT_REFERENCE.gwp("nitrous_oxide"), 0.0)

    # The two paths must agree before their speeds mean anything.
    v_liquid, v_co2e, v_cost = vectorised(*args_)
    p_liquid, p_co2e, p_cost = plain_loop(*args_)
    worst = max(
        float(np.max(np.abs(np.asarray(p) - v) / np.maximum(np.abs(v), 1e-12)))
        for p, v in ((p_liquid, v_liquid), (p_co2e, v_co2e), (p_cost, v_cost))
    )

    vec_median, vec_best = median_time(lambda: vectorised(*args_), runs)
    loop_median, loop_best = median_time(lambda: plain_loop(*args_), loop_runs)
    print(f"phase rows:                  {n:,}")
    print(f"runs (median of):            {runs} vectorised, {loop_runs} loop")
    print(f"vectorised (numpy) median:   {vec_median:.4f} s  (best {vec_best:.4f} s)")
    print(f"plain Python loop median:    {loop_median:.4f} s  (best {loop_best:.4f} s)")
    print(f"speed-up, loop / vectorised: {loop_median / vec_median:.1f} x")
    print(f"vectorised vs goal {GOAL_S:g} s:     {vec_median / GOAL_S:.3f} of the goal")
    print(f"rows per second, vectorised: {n / vec_median:,.0f}")
    print(
        f"largest relative difference between the two paths: {worst:.1e}"
        + ("" if math.isfinite(worst) else " (check!)")
    )
    benchresults.figure(run, "vectorised, median", vec_median, "s", goal=GOAL_S)
    benchresults.figure(run, "vectorised, best", vec_best, "s")
    benchresults.figure(run, "plain Python loop, median", loop_median, "s")
    benchresults.figure(run, "largest relative difference between the two paths", worst, "1")
    benchresults.ratio(run, "plain loop / vectorised (medians)", loop_median / vec_median, "plain Python loop")
    benchresults.finish("bench_phases", run, args.results)
    return 0


if __name__ == "__main__":
    sys.exit(main())
