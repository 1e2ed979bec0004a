"""Benchmark: simulated users planning a case in the dashboard at the same time.

Starts ``streamlit run serve.py`` (the dashboard with its warm start) on a free localhost port
with a store of its own (a temporary file named by ``GAS_LEDGER_STORE``), then drives N browser sessions (Playwright
contexts in one headless Debian chromium) that each open the app on the case-plan page and
change the O2 flow of the maintenance phase to a value of their own. Prints the page load
and the response (Enter pressed until the new figure shows) per session: median, 90th
percentile and worst. Figures are reported, never asserted; tests/test_load.py runs a small
version and checks that every session finishes without an error.

    .venv/bin/python benchmarks/bench_load.py            # 20 sessions, 5 at a time
    .venv/bin/python benchmarks/bench_load.py --sessions 40 --concurrency 10

Only loopback addresses are contacted; the run is bounded in sessions and in time.
``--tiny``: one session (the test suite's check that the script runs, a browser test).
Writes its figures to benchmarks/results/bench_load.json (benchmarks/benchresults.py).
"""

from __future__ import annotations

import argparse
import asyncio
import contextlib
import os
import socket
import statistics
import subprocess
import sys
import tempfile
import time
import urllib.request
from dataclasses import dataclass, field
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

import benchresults  # noqa: E402

from model.store import STORE_ENV  # noqa: E402

CHROMIUM = "/usr/bin/chromium"
CHROMIUM_ARGS = [
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
]
#: Text the case-plan page shows once its figures are drawn.
READY_TEXT = "What this case uses"
#: The figure each session watches for its change.
WATCHED_METRIC = "Liquid agent"
#: Streamlit's grid: header and row height in pixels (its default row height).
GRID_ROW_PX = 35
#: Environment variable naming a folder for screenshots of failed sessions.
SHOTS_ENV = "GAS_LEDGER_LOAD_SHOTS"
#: Tries of the edit per session, and how long a try waits for the grid to show it. [ms]
EDIT_ATTEMPTS = 4
EDIT_COMMIT_MS = 10_000
#: True once the watched figure no longer shows ``before`` (args: [metric label, before]).
FIGURE_CHANGED = """([name, before]) => {
    const m = [...document.querySelectorAll('[data-testid="stMetric"]')]
        .find(e => e.innerText.includes(name));
    const v = m && m.querySelector('[data-testid="stMetricValue"]');
    return v && v.innerText.trim() !== before;
}"""
#: True once the grid's accessible copy holds the typed flow (arg: the flow text).
CELL_HOLDS = """(flow) => [...document.querySelectorAll('[data-testid="stDataFrame"] td')]
    .some(td => td.innerText.trim() === flow)"""


@dataclass
class SessionResult:
    index: int
    flow: str
    load_s: float = float("nan")
    response_s: float = float("nan")
    before: str = ""
    after: str = ""
    #: Edits typed again because the grid did not take the first one.
    retries: int = 0
    errors: list[str] = field(default_factory=list)

    @property
    def ok(self) -> bool:
        return not self.errors and self.after not in ("", self.before)


@dataclass
class LoadRun:
    sessions: list[SessionResult]
    wall_s: float
    server_log: str

    @property
    def failures(self) -> list[SessionResult]:
        return [s for s in self.sessions if not s.ok]


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@contextlib.contextmanager
def dashboard(
    store_path: Path | str,
    log: Path | None = None,
    start_timeout_s: float = 90.0,
    app_root: Path | None = None,
    extra_args: tuple[str, ...] = (),
    entry: str = "serve.py",
):
    """Run the dashboard on a free loopback port; yields (url, log path). Stops it after.

    The app uses the store at ``store_path`` (a file, or a PostgreSQL URL); its output goes
    to ``log`` (default: a new temporary file); ``app_root`` runs another checkout's app
    (benchmarks compare with main); ``extra_args`` are more ``streamlit run`` options (e.g.
    ``--secrets.files``); ``entry`` is the file run: ``serve.py``, the dashboard with its warm
    start as users start it (a checkout without it runs ``app.py``), or ``app.py``. Also used
    by the browser tests (tests/browser/).
    """
    app_root = Path(app_root or ROOT)
    if not (app_root / entry).exists():
        entry = "app.py"
    port = free_port()
    log = log or Path(tempfile.mkstemp(prefix="gas-ledger-load-", suffix=".log")[1])
    env = dict(os.environ, **{STORE_ENV: str(store_path)})
    with open(log, "wb") as out:
        proc = subprocess.Popen(
            [
                sys.executable,
                "-m",
                "streamlit",
                "run",
                str(app_root / entry),
                "--server.port",
                str(port),
                "--server.address",
                "127.0.0.1",
                "--server.headless",
                "true",
                "--browser.gatherUsageStats",
                "false",
                *extra_args,
            ],
            cwd=app_root,
            env=env,
            stdout=out,
            stderr=subprocess.STDOUT,
        )
    url = f"http://127.0.0.1:{port}/"
    try:
        deadline = time.monotonic() + start_timeout_s
        while True:
            try:
                with urllib.request.urlopen(url + "_stcore/health", timeout=2) as r:
                    if r.status == 200:
                        break
            except OSError:
                pass
            if proc.poll() is not None or time.monotonic() > deadline:
                raise RuntimeError(f"the dashboard did not start: {log.read_text()[-2000:]}")
            time.sleep(0.3)
        yield url, log
    finally:
        proc.terminate()
        try:
            proc.wait(timeout=15)
        except subprocess.TimeoutExpired:
            proc.kill()
            proc.wait(timeout=15)


async def _idle(page, timeout_ms: int) -> None:
    """Wait until the app's script has finished its run (Streamlit marks it on the app root)."""
    await page.locator('[data-testid="stApp"][data-test-script-state="notRunning"]').wait_for(timeout=timeout_ms)


async def _open_o2_cell(page, timeout_ms: int, attempts: int = 4):
    """Open the editor of the O2 cell of the maintenance phase (row 2, column 3 of the grid).

    The grid is drawn on a canvas; its accessible copy (``glide-cell-<column>-<row>``) gives
    the cell's text, and the editor is used only when it opened on exactly that cell (under
    heavy load a keystroke is now and then dropped, so the selection can land elsewhere).
    """
    grid = page.locator('[data-testid="stDataFrame"]').first
    target = grid.locator('[data-testid="glide-cell-3-1"]')
    editor = page.locator("textarea.gdg-input")
    for attempt in range(attempts):
        await _idle(page, timeout_ms)
        expected = (await target.inner_text(timeout=timeout_ms)).strip()
        await grid.click(position={"x": 80, "y": GRID_ROW_PX * 2 + GRID_ROW_PX // 2})
        await page.keyboard.press("ArrowRight")
        await page.keyboard.press("ArrowRight")
        await page.keyboard.press("Enter")
        try:
            await editor.wait_for(timeout=5000)
            if (await editor.input_value()).strip() == expected:
                return editor
        except Exception:  # noqa: BLE001  (a rerun replaced the grid, or the editor did not open)
            pass
        if attempt == attempts - 1:
            raise RuntimeError(f"could not open the O2 cell of the maintenance phase ({expected!r})")
        await page.keyboard.press("Escape")
        await page.wait_for_timeout(300)
    return editor


async def _state(page) -> str:
    """What the page shows, for the message of a session that failed."""
    with contextlib.suppress(Exception):
        return await page.evaluate("""() => {
            const app = document.querySelector('[data-testid="stApp"]');
            const cells = [...document.querySelectorAll('[data-testid="stDataFrame"] td')]
                .map(t => t.innerText.trim());
            const alerts = [...document.querySelectorAll('[data-testid="stAlertContainer"]')]
                .map(a => a.innerText.trim().slice(0, 120));
            const script = app && app.getAttribute('data-test-script-state');
            return `script ${script}; grid ${JSON.stringify(cells.slice(0, 24))}; alerts ${JSON.stringify(alerts)}`;
        }""")
    return "page state unreadable"


async def _session(context, url: str, index: int, flow: str, timeout_ms: int) -> SessionResult:
    result = SessionResult(index, flow)
    page = await context.new_page()
    page.on("pageerror", lambda exc: result.errors.append(f"page error: {exc}"))
    try:
        t0 = time.perf_counter()
        await page.goto(url, timeout=timeout_ms)
        await page.get_by_text(READY_TEXT).wait_for(timeout=timeout_ms)
        value = (
            page.locator('[data-testid="stMetric"]')
            .filter(has_text=WATCHED_METRIC)
            .locator('[data-testid="stMetricValue"]')
        )
        await value.wait_for(timeout=timeout_ms)
        result.load_s = time.perf_counter() - t0
        result.before = (await value.inner_text()).strip()
        for attempt in range(EDIT_ATTEMPTS):
            editor = await _open_o2_cell(page, timeout_ms)
            await editor.fill(flow)
            t1 = time.perf_counter()
            await page.keyboard.press("Enter")
            # Under heavy load the grid now and then drops a keystroke and the edit is not
            # taken; the user sees the old value in the cell and types it again.
            try:
                await page.wait_for_function(CELL_HOLDS, arg=flow, timeout=EDIT_COMMIT_MS)
                break
            except Exception:  # noqa: BLE001
                if attempt == EDIT_ATTEMPTS - 1:
                    raise RuntimeError(
                        f"the grid did not take the edit in {EDIT_ATTEMPTS} tries ({await _state(page)})"
                    ) from None
                result.retries += 1
                await page.keyboard.press("Escape")
        try:
            await page.wait_for_function(FIGURE_CHANGED, arg=[WATCHED_METRIC, result.before], timeout=timeout_ms)
        except Exception:  # noqa: BLE001
            shown = (await value.inner_text()).strip()
            raise RuntimeError(
                f"the edit was taken but {WATCHED_METRIC!r} still shows {shown!r} after "
                f"{timeout_ms / 1000:g} s ({await _state(page)})"
            ) from None
        result.response_s = time.perf_counter() - t1
        result.after = (await value.inner_text()).strip()
        for kind in ("stException", "stAlertContentError"):
            found = await page.locator(f'[data-testid="{kind}"]').all_inner_texts()
            result.errors.extend(f"{kind}: {text.strip()[:200]}" for text in found)
    except Exception as exc:  # noqa: BLE001  (every failure of a session is reported, not raised)
        result.errors.append(f"{type(exc).__name__}: {str(exc).splitlines()[0][:700]}")
        if os.environ.get(SHOTS_ENV):
            with contextlib.suppress(Exception):
                await page.screenshot(path=f"{os.environ[SHOTS_ENV]}/load-session-{index}.png", full_page=True)
    finally:
        await page.close()
    return result


async def _drive(url: str, sessions: int, concurrency: int, timeout_ms: int, warmup: bool) -> list[SessionResult]:
    from playwright.async_api import async_playwright

    gate = asyncio.Semaphore(concurrency)
    async with async_playwright() as p:
        browser = await p.chromium.launch(executable_path=CHROMIUM, args=CHROMIUM_ARGS)
        # Each page is a session of its own on the server (Streamlit keys sessions by their
        # websocket); sharing one browser context only shares the cache of static files.
        context = await browser.new_context(viewport={"width": 1400, "height": 1000})
        try:

            async def one(i):
                async with gate:
                    # Flows of 0.50, 0.55, ... L/min: each session asks for a figure of its own.
                    return await _session(context, url, i, f"{0.5 + 0.05 * i:.2f} L/min", timeout_ms)

            if warmup:
                # One session first, not counted: imports, the store's first seeding and the
                # model caches are a server's start-up cost, not what a user waits for later.
                await _session(context, url, -1, "0.45 L/min", timeout_ms)
            return list(await asyncio.gather(*(one(i) for i in range(sessions))))
        finally:
            await browser.close()


def run_load(
    sessions: int = 20,
    concurrency: int | None = None,
    timeout_s: float = 60.0,
    store_path: Path | None = None,
    warmup: bool = True,
) -> LoadRun:
    """Start the dashboard, run ``sessions`` simulated users, stop it; return what happened.

    ``timeout_s`` bounds each step of a session (page load, response); the whole run is
    bounded by ``sessions / concurrency`` (plus the warm-up session) times a few such steps.
    """
    concurrency = concurrency or sessions
    with tempfile.TemporaryDirectory(prefix="gas-ledger-load-") as tmp:
        store = store_path or Path(tmp) / "store.sqlite3"
        with dashboard(store) as (url, log):
            t0 = time.perf_counter()
            results = asyncio.run(_drive(url, sessions, concurrency, int(timeout_s * 1000), warmup))
            wall = time.perf_counter() - t0
        text = log.read_text(errors="replace")
        log.unlink(missing_ok=True)
    return LoadRun(results, wall, text)


def _stats(values: list[float]) -> tuple[float, float, float] | None:
    """Median, 90th percentile and worst of the finite values, or None."""
    good = sorted(v for v in values if v == v)
    if not good:
        return None
    p90 = good[min(len(good) - 1, int(round(0.9 * (len(good) - 1))))]
    return statistics.median(good), p90, good[-1]


def _figures(values: list[float]) -> str:
    stats = _stats(values)
    if stats is None:
        return "no figures"
    return f"median {stats[0]:.2f} s, p90 {stats[1]:.2f} s, worst {stats[2]:.2f} s"


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sessions", type=int, default=20)
    parser.add_argument("--concurrency", type=int, default=5, help="sessions at once (default: 5)")
    parser.add_argument("--timeout", type=float, default=60.0, help="bound on each step [s]")
    benchresults.add_arguments(parser)
    args = parser.parse_args(argv)
    if args.tiny:
        args.sessions, args.concurrency = 1, 1
    if not 1 <= args.sessions <= 200 or not 1 <= args.concurrency <= 50:
        parser.error("--sessions must be 1-200 and --concurrency 1-50 (the run stays bounded)")
    record = benchresults.new_run({"sessions": args.sessions, "at once": args.concurrency}, args.tiny)
    run = run_load(args.sessions, args.concurrency, args.timeout)
    ok = len(run.sessions) - len(run.failures)
    print(
        f"sessions: {len(run.sessions)} ({min(args.concurrency, args.sessions)} at once), "
        f"finished without error: {ok}, wall time {run.wall_s:.1f} s, cores {os.cpu_count()}, "
        f"load average {os.getloadavg()[0]:.1f}"
    )
    print(f"page load:       {_figures([s.load_s for s in run.sessions])}")
    print(f"response (flow): {_figures([s.response_s for s in run.sessions])}")
    print(f"edits typed again: {sum(s.retries for s in run.sessions)}")
    for s in run.failures:
        print(f"session {s.index}: {'; '.join(s.errors) or 'figure did not change'}")
    benchresults.figure(record, "sessions finished without error", ok, "sessions")
    benchresults.figure(record, "wall time of the run", run.wall_s, "s")
    for what, values in (
        ("page load", [s.load_s for s in run.sessions]),
        ("response", [s.response_s for s in run.sessions]),
    ):
        stats = _stats(values)
        for label, value in zip(("median", "p90", "worst"), stats or (None, None, None), strict=True):
            benchresults.figure(record, f"{what}, {label}", value, "s")
    benchresults.figure(record, "edits typed again", sum(s.retries for s in run.sessions), "edits")
    benchresults.finish("bench_load", record, args.results)
    return 0 if not run.failures else 1


if __name__ == "__main__":
    sys.exit(main())
