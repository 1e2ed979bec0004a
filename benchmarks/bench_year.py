"""Benchmark: a 30-type case mix with 10,000 Monte Carlo draws per type (goal: under 1 s).

Prints wall time (best of several runs) for the circle-model simulation of every case type
at its duration nodes, a whole year (cold: the simulation cache emptied first; and warm), a
paired comparison, the ratio to the goal, and peak traced memory. The 30 types are the demo
mix's types with distinct median durations, so no two share a simulation.

    .venv/bin/python benchmarks/bench_year.py [--tiny] [--results DIR]

Writes its figures to benchmarks/results/bench_year.json (benchmarks/benchresults.py).
"""

from __future__ import annotations

import argparse
import resource
import sys
import time
import tracemalloc
from dataclasses import replace
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

import benchresults  # noqa: E402

from model.io.scenario import load_scenario  # noqa: E402
from model.year import simulate as year_simulate  # noqa: E402
from model.year.compare import compare_years  # noqa: E402
from model.year.inputs import Practice, Sampling  # noqa: E402
from model.year.result import compute_year  # noqa: E402
from model.year.simulate import year_inputs  # noqa: E402

TYPES = 30
DRAWS = 10_000
GOAL_S = 1.0


def thirty_type_scenario(n_types=TYPES, draws=DRAWS):
    base = load_scenario(ROOT / "demo_data" / "year" / "proposal_half_litre.toml")
    src = base.case_mix.types
    # Every type distinct (its own median duration), so no two share a simulation.
    types = tuple(
        replace(
            src[i % len(src)],
            name=f"{src[i % len(src)].name} #{i + 1}",
            cases_per_year=50 + 37 * i,
            median_min=src[i % len(src)].median_min * (1.0 + 0.05 * (i // len(src))),
        )
        for i in range(n_types)
    )
    return replace(
        base,
        case_mix=replace(base.case_mix, types=types),
        sampling=Sampling(
            draws=draws, seed=1, price_spread=0.1, gwp_sources=("ar6_gwp100", "ar5_gwp100", "sulbaek_andersen_2012")
        ),
    )


def best_of(fn, runs=5, cold=True):
    """Best and median wall time; ``cold`` empties the simulation cache before each run."""
    times = []
    for _ in range(runs):
        if cold:
            year_simulate._SIM_CACHE.clear()
        t = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t)
    return min(times), sorted(times)[len(times) // 2]


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    benchresults.add_arguments(ap)
    args = ap.parse_args(argv)
    n_types, draws, runs = (3, 200, 1) if args.tiny else (TYPES, DRAWS, 5)
    run = benchresults.new_run({"case types": n_types, "draws per type": draws, "runs": runs}, args.tiny)
    scenario = thirty_type_scenario(n_types, draws)
    baseline = replace(scenario, practice=Practice())
    compute_year(scenario)  # warm up imports
    rates_best, _ = best_of(lambda: year_inputs(scenario), runs)
    year_best, year_median = best_of(lambda: compute_year(scenario), runs)
    warm_best, warm_median = best_of(lambda: compute_year(scenario), runs, cold=False)
    pair_best, pair_median = best_of(lambda: compare_years(baseline, scenario), min(runs, 3))
    n_sub = len(year_inputs(scenario).subplans)
    n_nodes = sum(len(s.nodes_min) for s in year_inputs(scenario).subplans)
    year_simulate._SIM_CACHE.clear()
    tracemalloc.start()
    compute_year(scenario)
    _, peak_year = tracemalloc.get_traced_memory()
    tracemalloc.reset_peak()
    compare_years(baseline, scenario)
    _, peak_pair = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    rss_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(
        f"case mix: {n_types} types, {draws:,} draws per type; {n_sub} sub-plans simulated at {n_nodes} "
        f"(plan, duration) nodes"
    )
    print(f"simulation and per-type sums:       {rates_best * 1000:7.1f} ms")
    print(
        f"one year with P5-P95 ranges (cold): {year_best * 1000:7.1f} ms best, {year_median * 1000:.1f} ms median"
        f"  -> {year_best / GOAL_S:.2f} x the 1 s goal"
    )
    print(f"same year again (simulations cached): {warm_best * 1000:5.1f} ms best, {warm_median * 1000:.1f} ms median")
    print(f"paired comparison (two years):      {pair_best * 1000:7.1f} ms best, {pair_median * 1000:.1f} ms median")
    print(
        f"peak traced memory: year {peak_year / 2**20:.0f} MiB, comparison {peak_pair / 2**20:.0f} MiB; "
        f"process max RSS {rss_mb:.0f} MiB"
    )
    run["sizes"].update({"sub-plans": n_sub, "(plan, duration) nodes": n_nodes})
    benchresults.figure(run, "simulation and per-type sums, best", rates_best, "s")
    benchresults.figure(run, "one year with its P5-P95 ranges, cold, best", year_best, "s", goal=GOAL_S)
    benchresults.figure(run, "one year, cold, median", year_median, "s", goal=GOAL_S)
    benchresults.figure(run, "same year again, simulations cached, best", warm_best, "s")
    benchresults.figure(run, "paired comparison (two years), best", pair_best, "s")
    benchresults.figure(run, "peak traced memory, one year", peak_year / 2**20, "MiB")
    benchresults.figure(run, "peak traced memory, comparison", peak_pair / 2**20, "MiB")
    benchresults.figure(run, "process max RSS", rss_mb, "MiB")
    benchresults.ratio(run, "year with simulations cached / cold (best)", warm_best / year_best, "the cold year")
    benchresults.ratio(run, "paired comparison / one year (best)", pair_best / year_best, "one cold year")
    benchresults.finish("bench_year", run, args.results)
    return 0


if __name__ == "__main__":
    sys.exit(main())
