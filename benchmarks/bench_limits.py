"""Benchmark: the largest valid inputs the documented limits allow (goal: each in seconds).

Prints the wall time of
- ``case`` and ``sweep`` of the largest valid plan (100 phases at the longest phase each),
- one case type at the documented limits of a case mix (median 1,440 min, spread 2) next
  to the same type at spread 0,
- a ``year`` of a case mix at the limits (500 such types, each with its own plan length),
and the number of integration steps of the longest phase. Files are written under a
temporary folder and deleted afterwards.

    .venv/bin/python benchmarks/bench_limits.py            # everything
    .venv/bin/python benchmarks/bench_limits.py --quick    # 50 types instead of 500
    .venv/bin/python benchmarks/bench_limits.py --tiny     # 3 phases, 2 types: the script runs

Writes its figures to benchmarks/results/bench_limits.json (benchmarks/benchresults.py).
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

import benchresults  # noqa: E402

from model import circle  # noqa: E402
from model.case import compute_case  # noqa: E402
from model.io.case_mix import MAX_CASE_TYPES, load_case_mix  # noqa: E402
from model.io.plans import load_plan  # noqa: E402
from model.io.scenario import load_scenario  # noqa: E402
from model.sweep import flow_sweep  # noqa: E402
from model.year import simulate as year_simulate  # noqa: E402
from model.year.result import compute_year  # noqa: E402

DEMO_PLAN = ROOT / "demo_data" / "plans" / "lap_chole_low_flow.toml"
#: The plan format's limits (model/io/plans.py): phases per plan, minutes per phase.
MAX_PHASES = 100
MAX_PHASE_MIN = 24 * 60


def largest_plan(folder: Path, n_phases: int = MAX_PHASES, minutes: float = MAX_PHASE_MIN) -> Path:
    """A plan of ``n_phases`` phases of ``minutes`` each (by default as many and as long as the limits allow)."""
    phases = "".join(
        f'[[phases]]\nname = "phase {i + 1}"\nduration = "{minutes:g} min"\n'
        f'o2 = "{0.5 + (i % 3) * 0.5:g} L/min"\nair = "0.5 L/min"\n' + ('dial = "2 %"\n' if i % 2 else "target = 1.0\n")
        for i in range(n_phases)
    )
    path = folder / "largest.toml"
    path.write_text(
        'format = "fresh-gas-ledger plan 1"\nname = "Largest valid plan"\n'
        'agent = "sevoflurane"\n[patient]\nweight = "70 kg"\nage = "40 year"\n' + phases,
        encoding="utf-8",
    )
    return path


def case_mix_at_limits(folder: Path, types: int, spread: float, draws: int = 2000) -> Path:
    """A scenario over ``types`` case types at median 1,440 min and the given spread."""
    (folder / "plans").mkdir(exist_ok=True)
    (folder / "plans" / "p.toml").write_text(DEMO_PLAN.read_text(encoding="utf-8"), encoding="utf-8")
    rows = ["case_type,cases_per_year,median_duration,duration_spread,sevoflurane,desflurane,plan"]
    for i in range(types):
        rows.append(
            f"type {i},{100 + i},{1440 - 0.5 * i:g},{spread:g},{0.5 + 0.5 * (i % 2):g},"
            f"{0.5 - 0.5 * (i % 2):g},plans/p.toml"
        )
    mix = folder / f"mix_{types}_{spread:g}.csv"
    mix.write_text("\n".join(rows) + "\n", encoding="utf-8")
    scen = folder / f"scenario_{types}_{spread:g}.toml"
    scen.write_text(
        f'format = "fresh-gas-ledger scenario 1"\nname = "limits"\ncase_mix = "{mix.name}"\n'
        f"[uncertainty]\ndraws = {draws}\nseed = 1\n",
        encoding="utf-8",
    )
    return scen


def timed(label: str, fn):
    t = time.perf_counter()
    fn()
    s = time.perf_counter() - t
    print(f"{label:<58} {s:8.2f} s", flush=True)
    return s


def steps_of_phase(minutes: float) -> int:
    sched = circle.step_schedule(minutes)
    return sum(n for _, n in sched)


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="50 case types instead of 500")
    benchresults.add_arguments(parser)
    args = parser.parse_args(argv)
    n_phases, minutes, types, draws = (
        (3, 60.0, 2, 200) if args.tiny else (MAX_PHASES, MAX_PHASE_MIN, 50 if args.quick else MAX_CASE_TYPES, 2000)
    )
    run = benchresults.new_run(
        {"phases": n_phases, "minutes per phase": minutes, "case types": types, "draws": draws}, args.tiny
    )
    with tempfile.TemporaryDirectory(prefix="bench-limits-") as tmp:
        folder = Path(tmp)
        plan = load_plan(largest_plan(folder, n_phases, minutes))
        longest = max(p.minutes for p in plan.phases)
        print(
            f"largest plan: {len(plan.phases)} phases of {longest:g} min "
            f"({sum(p.minutes for p in plan.phases):g} min in all); "
            f"steps per phase {steps_of_phase(longest)}"
        )
        run["sizes"]["steps of the longest phase"] = steps_of_phase(longest)
        label = f"{len(plan.phases)} phases of {longest:g} min"
        benchresults.figure(run, f"case ({label})", timed(f"case ({label})", lambda: compute_case(plan)), "s")
        benchresults.figure(run, f"sweep ({label})", timed(f"sweep ({label})", lambda: flow_sweep(plan)), "s")
        for spread in (0.0, 2.0):
            scen = load_scenario(case_mix_at_limits(folder, 1, spread, draws))
            year_simulate._SIM_CACHE.clear()
            name = f"year, one type, median 1440 min, spread {spread:g}"
            benchresults.figure(run, name, timed(name, lambda scen=scen: compute_year(scen)), "s")
        scen = load_scenario(case_mix_at_limits(folder, types, 2.0, draws))
        found = len(load_case_mix(Path(scen.case_mix.source)).types)
        if found != types:
            print(f"the case mix holds {found} types, not {types}: no figure reported")
            return 1
        year_simulate._SIM_CACHE.clear()
        name = f"year, {types} types, median 1440 min, spread 2"
        benchresults.figure(run, name, timed(name, lambda: compute_year(scen)), "s")
    run["notes"].append("goal: each in seconds")
    benchresults.finish("bench_limits", run, args.results)
    return 0


if __name__ == "__main__":
    sys.exit(main())
