"""What the browser tests do in the app: open it, wait for it, read a figure, type into a table.

Plain helpers (the fixtures are in tests/browser/conftest.py). The app is started by
benchmarks/bench_load.py's ``dashboard``, the one way the tests and the load benchmark
start it.
"""

from __future__ import annotations

import re
import sys
import time
from pathlib import Path

from tests.helpers import ROOT

sys.path.insert(0, str(ROOT / "benchmarks"))
from bench_load import CHROMIUM, dashboard  # noqa: E402  (benchmarks/ is not a package)
from bench_load import CHROMIUM_ARGS as LAUNCH_ARGS  # noqa: E402

__all__ = ["CHROMIUM", "LAUNCH_ARGS", "dashboard"]

ARTIFACTS = ROOT / "test-artifacts"
ROW_HEIGHT = 35  # st.data_editor's default row and header height [px]
WAIT_MS = 90_000
#: True once every plotly chart on the page has drawn its svg (none on the page: true).
PLOTS_DRAWN = """() => [...document.querySelectorAll('[data-testid="stPlotlyChart"], .plotly-graph-div')]
  .every(p => p.querySelector('svg.main-svg'))"""


def metric_text(pg, label: str) -> str:
    box = pg.locator('[data-testid="stMetric"]').filter(has_text=label).first
    return box.locator('[data-testid="stMetricValue"]').inner_text()


def metric_number(pg, label: str) -> float:
    return float(re.sub(r"[^0-9.\-]", "", metric_text(pg, label).split()[0]))


def wait_idle(pg) -> None:
    """Wait until the app has finished its rerun (no running indicator)."""
    pg.wait_for_timeout(300)
    pg.wait_for_function("() => !document.querySelector('[data-testid=\"stStatusWidget\"]')", timeout=WAIT_MS)
    pg.wait_for_timeout(300)


def wait_metric_change(pg, label: str, old: str) -> str:
    deadline = time.monotonic() + WAIT_MS / 1000
    while time.monotonic() < deadline:
        text = metric_text(pg, label)
        if text != old:
            return text
        pg.wait_for_timeout(200)
    raise AssertionError(f"{label} stayed at {old}")


def edit_cell(pg, row: int, column: int, text: str) -> None:
    """Type ``text`` into the phases table's cell at ``row``, ``column``.

    Selects the row's first cell, moves right, opens the cell's editor, replaces its
    text, Enter. Retries the selection if the editor did not open (the
    grid may still be drawing on a loaded machine).
    """
    grid = pg.locator('[data-testid="stDataFrame"]').first
    grid.wait_for(state="visible")
    editor = pg.locator("textarea.gdg-input, #portal textarea").last
    for _attempt in range(4):
        grid.scroll_into_view_if_needed()
        box = grid.bounding_box()
        pg.mouse.click(box["x"] + 80, box["y"] + ROW_HEIGHT * (row + 1) + ROW_HEIGHT / 2)
        pg.wait_for_timeout(300)
        for _ in range(column):
            pg.keyboard.press("ArrowRight")
        pg.keyboard.press("Enter")  # open the cell's editor with its current text
        try:
            editor.wait_for(state="visible", timeout=5000)
            break
        except Exception:
            pg.keyboard.press("Escape")
            pg.wait_for_timeout(1000)
    else:
        raise AssertionError("the phases table's cell editor did not open")
    pg.keyboard.press("ControlOrMeta+a")
    pg.keyboard.type(text, delay=20)
    pg.keyboard.press("Enter")


def click_button(pg, text: str) -> None:
    """Click the app's button whose visible text ends with ``text`` (icons come first)."""
    pg.locator('button[data-testid^="stBaseButton"]').filter(has_text=re.compile(re.escape(text) + "$")).first.click()


def download_html_export(pg, folder: Path) -> tuple[Path, str]:
    """Click the page's "HTML report" download; the saved file and its text."""
    with pg.expect_download() as dl:
        click_button(pg, "HTML report")
    path = folder / "report.html"
    dl.value.save_as(path)
    return path, path.read_text(encoding="utf-8")


def open_app(pg, url: str) -> None:
    pg.goto(url)
    pg.get_by_text("What this case uses").wait_for()
    wait_idle(pg)


def choose(pg, label: str, option: str) -> None:
    pg.locator('[data-testid="stSelectbox"]').filter(has_text=label).first.click()
    pg.get_by_role("option", name=option, exact=True).click()
    wait_idle(pg)


def open_saved_plan(pg, url: str, name: str) -> None:
    """Open the app and, on the Case plan page, open the saved plan ``name``."""
    open_app(pg, url)
    choose(pg, "Open a saved plan", name)
    click_button(pg, "Open")
    pg.get_by_text(f"Editing: saved plan '{name}'").wait_for()
    wait_idle(pg)


def wait_plots_drawn(pg) -> None:
    """Wait until every plotly chart on the page has drawn."""
    pg.wait_for_function(PLOTS_DRAWN, timeout=WAIT_MS)


def go(pg, title: str, marker: str) -> None:
    """Go to page ``title`` by the sidebar and wait for its ``marker`` text."""
    pg.locator('[data-testid="stSidebarNav"]').get_by_role("link", name=title).first.click()
    pg.get_by_role("heading", name=title).first.wait_for()
    pg.get_by_text(marker).first.wait_for()
    wait_idle(pg)


def shot(pg, name: str) -> None:
    """Screenshot the page, once its charts are drawn, to test-artifacts/trust_<name>.png."""
    ARTIFACTS.mkdir(exist_ok=True)
    wait_plots_drawn(pg)
    pg.screenshot(path=str(ARTIFACTS / f"trust_{name}.png"))


def field(pg, label: str):
    """The input labelled exactly ``label``."""
    return pg.get_by_label(label, exact=True).first


def set_year_maintenance_flow(pg, flow: str) -> None:
    """On the Department year page: open the practice change, set the maintenance flow, Enter."""
    pg.get_by_text("Practice change and uncertainty").first.click()
    pg.get_by_text("Set maintenance flow").first.click()
    wait_idle(pg)
    box = field(pg, "Maintenance flow (L/min)")
    box.fill(flow)
    box.press("Enter")
