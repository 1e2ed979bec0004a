"""Benchmark: 10,000 simulated two-hour cases through the circle system, vectorised.

Runs ``model.circle.simulate_cases`` once over 10,000 random two-hour sevoflurane cases
(induction 10 min, maintenance 100 min in "target" mode at 1 MAC, emergence 10 min; random
flows, weights and ages), then a per-case loop calling the same function one case at a time
on a sample of the cases, and reports the wall time, the ratio, and the peak memory
(tracemalloc and the process's maximum resident size). Goal: under 2 s for the 10,000 cases
and under 1 GB of memory. No assertions (speed goals are reported, never tested).

    .venv/bin/python benchmarks/bench_circle.py [--cases 10000] [--loop-sample 200] [--tiny] [--results DIR]

Writes its figures to benchmarks/results/bench_circle.json (benchmarks/benchresults.py).
"""

from __future__ import annotations

import argparse
import resource
import statistics
import sys
import time
import tracemalloc
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

import benchresults  # noqa: E402

from model.case import simulation_totals  # noqa: E402
from model.circle import simulate_cases  # noqa: E402
from model.reference import DEFAULT_REFERENCE  # noqa: E402

CASES = 10_000
LOOP_SAMPLE = 200
GOAL_S = 2.0


def make_cases(n, seed=3):
    """Random but plausible two-hour cases (invented benchmark data)."""
    rng = np.random.default_rng(seed)
    minutes = np.stack([np.full(n, 10.0), np.full(n, 100.0), np.full(n, 10.0)])
    maint = rng.uniform(0.3, 3.0, n)
    o2 = np.stack([np.full(n, 3.0), maint * 0.6, np.full(n, 6.0)])
    air = np.stack([np.full(n, 3.0), maint * 0.4, np.zeros(n)])
    dial = np.stack([np.full(n, 6.0), np.full(n, np.nan), np.zeros(n)])
    target = np.stack([np.full(n, np.nan), np.full(n, 1.0), np.full(n, np.nan)])
    return dict(
        minutes=minutes,
        oxygen_l_min=o2,
        air_l_min=air,
        nitrous_oxide_l_min=0.0,
        dial_pct=dial,
        target_mac=target,
        weight_kg=rng.uniform(40.0, 120.0, n),
        age_years=rng.uniform(18.0, 90.0, n),
    )


def run_vectorised(agent, cases):
    sim = simulate_cases(agent, **cases)
    simulation_totals(sim, agent, DEFAULT_REFERENCE.prices, gwp_agent=195.0, gwp_n2o=273.0)
    return sim


def run_loop(agent, cases, k):
    out = []
    for i in range(k):
        one = {
            key: (v[:, i : i + 1] if np.ndim(v) == 2 else (v[i : i + 1] if np.ndim(v) == 1 else v))
            for key, v in cases.items()
        }
        out.append(simulate_cases(agent, **one)["liquid_ml"][0])
    return np.array(out)


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--cases", type=int, default=CASES)
    ap.add_argument("--loop-sample", type=int, default=LOOP_SAMPLE)
    benchresults.add_arguments(ap)
    args = ap.parse_args(argv)
    n, k = (50, 3) if args.tiny else (args.cases, min(args.loop_sample, args.cases))
    run = benchresults.new_run({"two-hour cases": n, "cases in the per-case loop": k}, args.tiny)
    agent = DEFAULT_REFERENCE.volatile("sevoflurane")
    cases = make_cases(n)
    run_vectorised(agent, make_cases(50))  # warm-up (imports, caches)
    times = []
    for _ in range(3):
        t0 = time.perf_counter()
        sim = run_vectorised(agent, cases)
        times.append(time.perf_counter() - t0)
    tracemalloc.start()
    run_vectorised(agent, cases)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    t0 = time.perf_counter()
    looped = run_loop(agent, cases, k)
    loop_per_case = (time.perf_counter() - t0) / k
    agree = np.max(np.abs(looped - sim["liquid_ml"][:k]) / sim["liquid_ml"][:k])
    vec = statistics.median(times)
    print(f"cases: {n:,} two-hour cases, sevoflurane, maintenance in target mode")
    print(
        f"vectorised: median {vec:.3f} s, best {min(times):.3f} s  (goal {GOAL_S:.0f} s: {vec / GOAL_S:.2f} x the goal)"
    )
    print(
        f"per-case loop: {loop_per_case * 1000:.1f} ms per case over {k} cases; "
        f"{loop_per_case * n:.1f} s projected for {n:,}; ratio {loop_per_case * n / vec:.0f}x"
    )
    print(f"agreement loop vs vectorised (liquid agent): {agree:.1e} relative")
    print(
        f"peak traced memory: {peak / 2**20:.0f} MiB; process max RSS "
        f"{resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024:.0f} MiB (goal under 1 GB)"
    )
    benchresults.figure(run, "vectorised, median", vec, "s", goal=GOAL_S)
    benchresults.figure(run, "vectorised, best", min(times), "s")
    benchresults.figure(run, "per-case loop, per case", loop_per_case * 1000, "ms")
    benchresults.figure(run, "relative difference loop vs vectorised (liquid agent)", agree, "1")
    benchresults.figure(run, "peak traced memory", peak / 2**20, "MiB", goal=1024)
    benchresults.figure(run, "process max RSS", resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024, "MiB")
    benchresults.ratio(
        run, "per-case loop (projected to all cases) / vectorised", loop_per_case * n / vec, "per-case loop"
    )
    benchresults.finish("bench_circle", run, args.results)
    return 0


if __name__ == "__main__":
    sys.exit(main())
