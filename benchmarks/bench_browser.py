"""Benchmark: what one user waits for in the browser, against a bare Streamlit page.

Starts the dashboard (``streamlit run serve.py``, as ``scripts/dashboard.sh`` does) with a new
store on a free loopback port and drives one headless Debian chromium at 1366 x 768, as a
user at a laptop would, timing from the user's action until the figure they wait for shows:

- **cold load**: the first session after the server started, until "Liquid agent" shows;
- **warm load**: a later session's first page;
- **edit**: the maintenance phase's O2 flow typed into the phases table, from Enter until
  "Liquid agent" shows the new figure;
- **page switch**: a click on "Reference" in the sidebar until its first table shows, and a
  click back on "Case plan" until "Liquid agent" shows;
- **first audit**: a click on "Record audit" until its first figure shows, the first audit
  of the server process (which also loads the compiled kernel), then a second one in a new
  session.

The same browser then opens a bare Streamlit page (one title, one figure) served the same
way: its cold and warm loads and a rerun after a click are the ratios' "bare" reference, so
the figures can be compared across runs taken at different machine loads. Figures are
reported, never asserted; ``tests/benchmarks/test_benchmarks_run.py`` runs ``--tiny`` (one
repeat) in the browser tests to check the script still works.

    .venv/bin/python benchmarks/bench_browser.py              # 5 repeats of each
    .venv/bin/python benchmarks/bench_browser.py --tiny       # 1 repeat, writes nothing

Writes its figures to benchmarks/results/bench_browser.json (benchmarks/benchresults.py).
"""

from __future__ import annotations

import argparse
import statistics
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

import benchresults  # noqa: E402
from bench_load import CHROMIUM, CHROMIUM_ARGS, FIGURE_CHANGED, dashboard  # noqa: E402

WAIT_MS = 180_000
VIEWPORT = {"width": 1366, "height": 768}
#: The goals of the dashboard trust work [s].
GOALS = {"cold load": 3.0, "edit": 0.5, "page switch": 1.0, "first audit": 3.0}
BARE_PAGE = """import streamlit as st
st.title("Bare page")
if st.button("Again"):
    st.session_state["n"] = st.session_state.get("n", 0) + 1
st.metric("Figure", st.session_state.get("n", 0))
"""


def _metric(page, label: str):
    return (
        page.locator('[data-testid="stMetric"]').filter(has_text=label).first.locator('[data-testid="stMetricValue"]')
    )


def _idle(page) -> None:
    page.locator('[data-testid="stApp"][data-test-script-state="notRunning"]').wait_for(timeout=WAIT_MS)


def _open(browser, url: str, label: str) -> tuple[object, object, float]:
    """A new session on ``url``; seconds until the figure ``label`` shows."""
    context = browser.new_context(viewport=VIEWPORT)
    page = context.new_page()
    page.set_default_timeout(WAIT_MS)
    t0 = time.perf_counter()
    page.goto(url)
    _metric(page, label).wait_for()
    return context, page, time.perf_counter() - t0


def _edit_o2(page, flow: str) -> float:
    """Type ``flow`` into the maintenance phase's O2 cell; seconds from Enter to the new figure."""
    _idle(page)
    before = _metric(page, "Liquid agent").inner_text().strip()
    grid = page.locator('[data-testid="stDataFrame"]').first
    grid.scroll_into_view_if_needed()
    editor = page.locator("textarea.gdg-input")
    for _attempt in range(4):
        grid.click(position={"x": 80, "y": 35 * 2 + 17})
        page.keyboard.press("ArrowRight")
        page.keyboard.press("ArrowRight")
        page.keyboard.press("Enter")
        try:
            editor.wait_for(timeout=5000)
            break
        except Exception:  # noqa: BLE001  (the grid was still drawing: try again)
            page.keyboard.press("Escape")
            page.wait_for_timeout(500)
    editor.fill(flow)
    t0 = time.perf_counter()
    page.keyboard.press("Enter")
    page.wait_for_function(FIGURE_CHANGED, arg=["Liquid agent", before], timeout=WAIT_MS)
    return time.perf_counter() - t0


def _switch(page, link: str, ready) -> float:
    """Seconds from a click on the sidebar link ``link`` until ``ready(page)`` has waited."""
    _idle(page)
    nav = page.locator('[data-testid="stSidebarNav"]')
    t0 = time.perf_counter()
    nav.get_by_role("link", name=link, exact=True).click()
    ready(page)
    return time.perf_counter() - t0


def _reference_ready(page) -> None:
    page.get_by_role("heading", name="Reference").first.wait_for()
    page.locator('[data-testid="stDataFrame"], [data-testid="stTable"]').first.wait_for()


def _case_plan_ready(page) -> None:
    page.get_by_role("heading", name="Case plan").first.wait_for()
    _metric(page, "Liquid agent").wait_for()


def _audit_ready(page) -> None:
    page.get_by_role("heading", name="Record audit").first.wait_for()
    page.locator('[data-testid="stMetric"]').first.wait_for()


def measure(repeats: int) -> dict[str, list[float]]:
    """Seconds of each measure, ``repeats`` times (a new server for each cold figure)."""
    from playwright.sync_api import sync_playwright

    out: dict[str, list[float]] = {}

    def add(name: str, seconds: float) -> None:
        out.setdefault(name, []).append(seconds)

    tmp = Path(tempfile.mkdtemp(prefix="gl-bench-browser-"))
    bare = tmp / "bare.py"
    bare.write_text(BARE_PAGE, encoding="utf-8")
    with sync_playwright() as p:
        browser = p.chromium.launch(executable_path=CHROMIUM, args=CHROMIUM_ARGS)
        for r in range(repeats):
            with dashboard(tmp / f"store-{r}.sqlite3", tmp / f"app-{r}.log") as (url, _):
                context, page, seconds = _open(browser, url, "Liquid agent")
                add("cold load", seconds)
                context.close()
                context, page, seconds = _open(browser, url, "Liquid agent")
                add("warm load", seconds)
                add("edit", _edit_o2(page, f"{0.6 + 0.1 * r:.1f}"))
                add("edit", _edit_o2(page, f"{1.1 + 0.1 * r:.1f}"))
                add("page switch", _switch(page, "Reference", _reference_ready))
                add("page switch", _switch(page, "Case plan", _case_plan_ready))
                add("first audit", _switch(page, "Record audit", _audit_ready))
                context.close()
                context, page, _seconds = _open(browser, url, "Liquid agent")
                add("second audit (new session)", _switch(page, "Record audit", _audit_ready))
                context.close()
            with dashboard(tmp / "bare-store.sqlite3", tmp / f"bare-{r}.log", app_root=tmp, entry="bare.py") as (
                url,
                _,
            ):
                context, page, seconds = _open(browser, url, "Figure")
                add("bare page: cold load", seconds)
                context.close()
                context, page, seconds = _open(browser, url, "Figure")
                add("bare page: warm load", seconds)
                _idle(page)
                t0 = time.perf_counter()
                page.get_by_role("button", name="Again").click()
                page.wait_for_function(FIGURE_CHANGED, arg=["Figure", "0"], timeout=WAIT_MS)
                add("bare page: rerun after a click", time.perf_counter() - t0)
                context.close()
        browser.close()
    return out


#: Each measure's bare reference for its ratio.
AGAINST = {
    "cold load": "bare page: cold load",
    "warm load": "bare page: warm load",
    "edit": "bare page: rerun after a click",
    "page switch": "bare page: rerun after a click",
    "first audit": "bare page: rerun after a click",
}


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeats", type=int, default=5, help="repeats of each measure (default 5)")
    benchresults.add_arguments(ap)
    args = ap.parse_args(argv)
    if not 1 <= args.repeats <= 50:
        ap.error("--repeats must be 1-50 (the run stays bounded)")
    repeats = 1 if args.tiny else args.repeats
    run = benchresults.new_run({"repeats": repeats, "viewport": "1366 x 768"}, args.tiny)
    times = measure(repeats)
    medians = {name: statistics.median(values) for name, values in times.items()}
    for name, values in times.items():
        goal = GOALS.get(name)
        benchresults.figure(run, f"{name}: median of {len(values)}", medians[name], "s", goal=goal)
        benchresults.figure(run, f"{name}: worst of {len(values)}", max(values), "s")
        print(
            f"{name:34s} median {medians[name]:6.2f} s  worst {max(values):6.2f} s"
            + (f"  (goal under {goal:g} s)" if goal else "")
        )
    for name, against in AGAINST.items():
        if medians.get(against):
            benchresults.ratio(run, f"{name} (median)", medians[name] / medians[against], against + " (median)")
    run["notes"].append("one user at a time, headless Debian chromium, 1366 x 768; each cold figure is a new server")
    benchresults.finish("bench_browser", run, args.results)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
