"""Rerun time of the case plan page after one widget change (Streamlit AppTest, demo data).

Run: .venv/bin/python benchmarks/bench_page_rerun.py [--runs 30]

How it is measured: the page runs in Streamlit's AppTest (the real script runner, no browser
or network) on a fresh store seeded with the demo plans. After two warm-up runs, each timed
run changes one widget and calls ``AppTest.run()``; the wall time of that call is recorded.

- "new value": the maintenance O2 flow gets a value not seen before (70 kg patient, phases
  table edit), so the model runs (cache miss): the circle simulation, the flow sweep and
  the page.
- "seen value": the flow toggles between two values already computed, so the model calls
  hit ``st.cache_data`` and only the page itself is timed.

- "target mode": the same new-value edit with the maintenance phase held at an end-tidal
  target (1.0 x MAC), so the model finds the dial.

Prints wall-time medians and 90th percentiles with their ratio to the 300 ms goal, and the
median CPU time of the process per rerun (steadier than wall time on a shared, loaded machine),
with the load average at the start and the end.

``--cold`` also measures a cold start: a new Python process running the page once in AppTest
(imports, store seeding, the first model run; wall and CPU), and the server on a loopback port
with a new store, opened in headless chromium until the "Liquid agent" figure shows: the first
session opens as soon as the server answers its health check (the worst case for a warm-up
that runs in the background), then a second session on the warm server. Measured for
``streamlit run serve.py`` (the dashboard as users start it, with the warm start) and for
``streamlit run app.py`` (no warm-up); each line also gives the seconds from starting the
command until the server answered.

``--root DIR`` runs the same measurements on another checkout (e.g. an export of main), for a
relative figure taken at the same load. ``--tiny``: two runs of each, no cold start (the test
suite's check that the script runs). Writes its figures to
benchmarks/results/bench_page_rerun.json (benchmarks/benchresults.py).
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "benchmarks"))

import benchresults  # noqa: E402

GOAL_MS = 300.0


def _load() -> float:
    return os.getloadavg()[0] if hasattr(os, "getloadavg") else float("nan")


def cold_apptest(root: Path) -> tuple[float, float]:
    """Wall and CPU seconds of a new process that runs the case plan page once (AppTest)."""
    code = (
        "import os, sys, time, tempfile\n"
        "t0, c0 = time.perf_counter(), time.process_time()\n"
        "os.environ['GAS_LEDGER_STORE'] = tempfile.mkdtemp() + '/s.sqlite3'\n"
        f"sys.path.insert(0, {str(root)!r})\n"
        "from streamlit.testing.v1 import AppTest\n"
        f"at = AppTest.from_file({str(root / 'pages' / 'case_plan.py')!r}, default_timeout=120)\n"
        "at.run()\n"
        "assert not at.exception\n"
        "print(time.perf_counter() - t0, time.process_time() - c0)\n"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True, cwd=root)
    wall, cpu = out.stdout.split()[-2:]
    return float(wall), float(cpu)


def cold_browser(root: Path, entry: str = "serve.py") -> tuple[float, float, float]:
    """Seconds until the server answered, and until "Liquid agent" shows in two sessions.

    From starting ``streamlit run <entry>`` until the server answered, and from opening the
    app until "Liquid agent" shows: the first session after the server started (cold), and a
    second session (warm server).
    """
    sys.path.insert(0, str(ROOT / "benchmarks"))
    from bench_load import CHROMIUM, CHROMIUM_ARGS, dashboard
    from playwright.sync_api import sync_playwright

    tmp = Path(tempfile.mkdtemp(prefix="gl-cold-"))
    times = []
    t_start = time.perf_counter()
    with dashboard(tmp / "store.sqlite3", tmp / "streamlit.log", app_root=root, entry=entry) as (url, _):
        started = time.perf_counter() - t_start
        with sync_playwright() as p:
            browser = p.chromium.launch(executable_path=CHROMIUM, args=CHROMIUM_ARGS)
            for _ in range(2):
                context = browser.new_context(viewport={"width": 1366, "height": 768})
                page = context.new_page()
                t0 = time.perf_counter()
                page.goto(url, timeout=120_000)
                page.locator('[data-testid="stMetric"]').filter(has_text="Liquid agent").first.wait_for(timeout=120_000)
                times.append(time.perf_counter() - t0)
                context.close()
            browser.close()
    return started, times[0], times[1]


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--runs", type=int, default=30)
    ap.add_argument("--cold", action="store_true", help="also measure a cold start (AppTest and browser)")
    ap.add_argument("--root", type=Path, default=ROOT, help="project checkout to measure (default: this one)")
    benchresults.add_arguments(ap)
    args = ap.parse_args(argv)
    if args.tiny:
        args.runs, args.cold = 2, False
    run = benchresults.new_run({"runs of each": args.runs, "cold start": args.cold}, args.tiny)
    if args.root.resolve() != ROOT:
        run["notes"].append(f"measured on another checkout: {args.root}")
    root = args.root.resolve()
    tmp = tempfile.mkdtemp(prefix="gl-bench-")
    os.environ["GAS_LEDGER_STORE"] = str(Path(tmp) / "store.sqlite3")
    sys.path.insert(0, str(root))
    from streamlit.testing.v1 import AppTest

    load_start = _load()
    at = AppTest.from_file(str(root / "pages" / "case_plan.py"), default_timeout=120)
    at.run()
    at.run()
    assert not at.exception, at.exception
    key = at.data_editor[0].key
    extra: dict = {}

    def timed(o2: str) -> tuple[float, float]:
        rows = {1: {"O2": o2, **extra}}
        at.session_state[key] = {"edited_rows": rows, "added_rows": [], "deleted_rows": []}
        t0, c0 = time.perf_counter(), time.process_time()
        at.run()
        ms, cpu_ms = (time.perf_counter() - t0) * 1000, (time.process_time() - c0) * 1000
        assert not at.exception and not at.error, (at.exception, [e.value for e in at.error])
        return ms, cpu_ms

    timed("0.4 L/min")
    timed("0.6 L/min")
    new = [timed(f"{0.30 + 0.01 * i:.2f} L/min") for i in range(args.runs)]
    seen = [timed("0.4 L/min" if i % 2 else "0.6 L/min") for i in range(args.runs)]
    extra.update({"control": "target", "setting": "1.0"})
    timed("0.9 L/min")
    target = [timed(f"{0.50 + 0.01 * i:.2f} L/min") for i in range(args.runs)]

    def report(name, runs):
        xs = sorted(r[0] for r in runs)
        cpu = statistics.median(r[1] for r in runs)
        med = statistics.median(xs)
        p90 = xs[int(0.9 * (len(xs) - 1))]
        benchresults.figure(run, f"{name}: wall median", med, "ms", goal=GOAL_MS)
        benchresults.figure(run, f"{name}: wall p90", p90, "ms")
        benchresults.figure(run, f"{name}: CPU median", cpu, "ms", goal=GOAL_MS)
        print(
            f"{name:<44} wall median {med:7.1f} ms  p90 {p90:7.1f} ms  median/goal {med / GOAL_MS:5.2f}"
            f"   CPU median {cpu:6.1f} ms (CPU/goal {cpu / GOAL_MS:4.2f})"
        )

    print(
        f"Case plan page rerun after one widget change ({root}; AppTest, {args.runs} runs each, "
        f"{os.cpu_count()} CPUs, load average {load_start:.1f} at the start, {_load():.1f} at the end, "
        f"goal {GOAL_MS:.0f} ms)"
    )
    report("new value (the model runs)", new)
    report("seen value (model results from the cache)", seen)
    report("target mode, new value", target)
    if args.cold:
        load = _load()
        wall, cpu = cold_apptest(root)
        benchresults.figure(run, "cold: new process, first page run (AppTest), wall", wall, "s")
        benchresults.figure(run, "cold: new process, first page run (AppTest), CPU", cpu, "s")
        print(
            f"cold start, new process, first page run (AppTest): wall {wall:.2f} s, CPU {cpu:.2f} s "
            f"(load average {load:.1f})"
        )
        for entry in ("serve.py", "app.py"):
            if not (root / entry).exists():
                continue
            load = _load()
            started, first, second = cold_browser(root, entry)
            benchresults.figure(
                run, f"cold: browser, first session after `streamlit run {entry}` starts", first, "s", goal=3.0
            )
            benchresults.figure(run, f"browser, second session (warm server), {entry}", second, "s", goal=3.0)
            print(
                f"cold start, streamlit run {entry}, browser until 'Liquid agent' shows: first session after "
                f"server start {first:.2f} s, second session {second:.2f} s (server answered {started:.1f} s "
                f"after the command; load average {load:.1f} before, {_load():.1f} after)"
            )
    benchresults.ratio(
        run,
        "seen value / new value (CPU medians)",
        statistics.median(r[1] for r in seen) / statistics.median(r[1] for r in new),
        "a rerun that runs the model",
    )
    benchresults.finish("bench_page_rerun", run, args.results)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
