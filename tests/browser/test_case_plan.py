"""Real-browser tests: Debian's chromium (Playwright) against `streamlit run serve.py` on localhost.

The app runs with its own store in a temporary folder. Screenshots of every page go to
test-artifacts/ (ignored by git).
"""

from __future__ import annotations

import contextlib
import re
import sys
import time
from pathlib import Path

import openpyxl
import pytest

pytestmark = pytest.mark.browser

ROOT = Path(__file__).resolve().parents[1]
ARTIFACTS = ROOT / "test-artifacts"
sys.path.insert(0, str(ROOT / "benchmarks"))
from bench_load import dashboard  # noqa: E402  (the one way the tests start the app)

sys.path.insert(0, str(ROOT / "tests"))
from browsertest import browser  # noqa: E402,F401  (module fixture: one chromium per file)

ROW_HEIGHT = 35  # st.data_editor's default row and header height [px]
WAIT_MS = 90_000


@pytest.fixture(scope="module")
def store_path(tmp_path_factory):
    return tmp_path_factory.mktemp("browser-store") / "store.sqlite3"


@contextlib.contextmanager
def serve_app(log_dir: Path, store: Path):
    """``streamlit run serve.py`` (app.py with its warm start) on a free loopback port with its own
    store; yields its URL.
    """
    with dashboard(store, log_dir / "streamlit.log") as (url, _):
        yield url.rstrip("/")


@pytest.fixture(scope="module")
def app_url(tmp_path_factory, store_path):
    with serve_app(tmp_path_factory.mktemp("browser-log"), store_path) as url:
        yield url


@pytest.fixture
def page(browser):
    context = browser.new_context(viewport={"width": 1400, "height": 1000}, accept_downloads=True)
    pg = context.new_page()
    pg.set_default_timeout(WAIT_MS)
    yield pg
    context.close()


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
    """Type into the phases table: select the row's first cell, move right, open the cell's
    editor, replace its text, Enter. Retries the selection if the editor did not open (the
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


def download_html_report(pg, folder: Path) -> tuple[Path, str]:
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


def test_plan_lower_flow_save_reload_and_download(page, app_url, tmp_path):
    ARTIFACTS.mkdir(exist_ok=True)
    open_saved_plan(page, app_url, "Laparoscopic cholecystectomy, high flow")
    before_text = metric_text(page, "Liquid agent")
    before = metric_number(page, "Liquid agent")

    # Maintenance (row 2) fresh gas flow from 2 L/min (1 O2 + 1 air) to 0.5 L/min.
    edit_cell(page, 1, 2, "0.25 L/min")  # O2 column
    mid = wait_metric_change(page, "Liquid agent", before_text)
    wait_idle(page)
    edit_cell(page, 1, 3, "250 mL/min")  # air column, another unit
    wait_metric_change(page, "Liquid agent", mid)
    wait_idle(page)
    after = metric_number(page, "Liquid agent")
    # Source: Dion P., Can J Anaesth 1992 - at a fixed dial, liquid use is proportional to
    # fresh gas flow, so a quarter of the maintenance flow uses markedly less liquid.
    assert after < before
    page.screenshot(path=str(ARTIFACTS / "case_plan_low_flow.png"))

    # Save, reload the page, and find the saved plan (the most recent opens first).
    click_button(page, "Save")
    page.get_by_text("as version 2").wait_for()
    page.reload()
    page.get_by_text("What this case uses").wait_for()
    wait_idle(page)
    page.get_by_text("Editing: saved plan 'Laparoscopic cholecystectomy, high flow'").wait_for()
    assert metric_number(page, "Liquid agent") == pytest.approx(after)

    # Download the Excel workbook and read the figure back.
    with page.expect_download() as dl:
        click_button(page, "Excel")
    path = tmp_path / "plan.xlsx"
    dl.value.save_as(path)
    ws = openpyxl.load_workbook(path)["Summary"]
    rows = {r[1]: r[2] for r in ws.iter_rows(min_row=2, values_only=True)}
    assert rows["Liquid agent"] == pytest.approx(after, abs=0.05)


def test_invalid_entry_shows_message_not_traceback(page, app_url):
    open_app(page, app_url)
    before = metric_text(page, "Liquid agent")
    edit_cell(page, 1, 2, "lots")
    page.get_by_text("Phases table, row 2, O2 flow").wait_for()
    wait_idle(page)
    assert metric_text(page, "Liquid agent") == before
    assert page.locator('[data-testid="stException"]').count() == 0
    page.screenshot(path=str(ARTIFACTS / "case_plan_invalid_entry.png"))


@pytest.mark.parametrize(
    "title, slug, marker",
    [
        ("Case plan", "case_plan", "What this case uses"),
        ("Compare", "compare", "Against the baseline"),
        ("Reference", "reference", "Your values"),
        ("Department year", "department_year", "Bottles bought per month"),
        ("Record audit", "record_audit", "Rows set aside"),
        ("Emissions report", "emissions_report", "What drove the change"),
    ],
)
def test_every_page_renders_and_is_captured(page, app_url, title, slug, marker):
    ARTIFACTS.mkdir(exist_ok=True)
    page.set_viewport_size({"width": 1400, "height": 2400})
    open_app(page, app_url)
    page.get_by_role("link", name=title).first.click()
    page.get_by_role("heading", name=title).first.wait_for()
    page.get_by_text(marker).first.wait_for()
    wait_idle(page)
    page.wait_for_timeout(800)  # let plotly finish drawing
    assert page.locator('[data-testid="stException"]').count() == 0
    page.screenshot(path=str(ARTIFACTS / f"page_{slug}.png"))


def test_emissions_report_html_carries_the_headline_figure(page, app_url, tmp_path):
    open_app(page, app_url)
    page.get_by_role("link", name="Emissions report").first.click()
    page.get_by_text("What drove the change").first.wait_for()
    wait_idle(page)
    figure = metric_text(page, "Use-based, IPCC AR6 GWP100")  # e.g. "23.7 t CO2e"
    assert figure.endswith("t CO2e")
    path, doc = download_html_report(page, tmp_path)
    headline = doc.split("id='headline'>", 1)[1].split("</p>", 1)[0]
    assert f": {figure} (IPCC AR6 GWP100" in headline and "down" in headline
    assert "Method statement" in doc and "Ang B.W." in doc and "Estimates support planning" in doc
    # The report opens offline: its charts are drawn from the inlined plotly (the waterfall among them).
    page.goto(path.as_uri())
    page.locator(".js-plotly-plot").first.wait_for()
    assert page.locator(".js-plotly-plot").count() >= 5
    assert page.get_by_text("What drove the change (additive LMDI-I)").count() >= 1


HOSTILE_NAME = '<img src=x onerror="window.__pwned=1">[link](javascript:window.__pwned=2)'


def test_hostile_plan_name_is_shown_as_text_and_escaped_in_the_report(page, app_url, store_path, tmp_path):
    from dataclasses import replace

    from model import load_plan
    from model.store import Store

    open_app(page, app_url)  # the app has made and seeded the store
    demo = load_plan(ROOT / "demo_data" / "plans" / "lap_chole_low_flow.toml")
    Store(store_path).save_plan(replace(demo, name=HOSTILE_NAME))
    page.reload()
    page.get_by_text("What this case uses").wait_for()
    wait_idle(page)
    page.get_by_text("Editing: saved plan '<img src=x").wait_for()  # shown as typed
    assert page.locator("main img[src='x']").count() == 0
    assert page.locator("a[href^='javascript']").count() == 0
    assert page.evaluate("() => window.__pwned === undefined")
    path, doc = download_html_report(page, tmp_path)
    assert "&lt;img src=x" in doc and "<img src=x" not in doc
    # Open the report itself: the name is text, nothing runs, nothing is fetched.
    requests = []
    page.on("request", lambda r: requests.append(r.url))
    page.goto(path.as_uri())
    page.wait_for_timeout(1500)
    assert page.evaluate("() => window.__pwned === undefined")
    assert page.locator("img[src='x']").count() == 0
    assert all(u.startswith("file:") or u.startswith("data:") for u in requests), requests


def test_a_direct_link_as_the_first_request_gets_the_app_navigation(page, tmp_path):
    # A bookmark to a page, opened first after a server start, must still show the app's
    # own sections and titles (not one entry per file in pages/, nor an "app" entry).
    with serve_app(tmp_path, tmp_path / "store.sqlite3") as url:
        page.goto(url + "/compare")
        page.get_by_text("Against the baseline").first.wait_for()
        wait_idle(page)
        nav = page.locator('[data-testid="stSidebarNav"]')
        assert nav.get_by_text("The department").count() == 1
        assert nav.get_by_role("link", name="Department year").count() == 1
        assert nav.get_by_role("link", name="app", exact=True).count() == 0


# ---- a shared department server: identity by header, two app processes on PostgreSQL ----

EDITOR = "lead@fernhollow.example"


def _sidebar_text(pg) -> str:
    return pg.locator('[data-testid="stSidebar"]').inner_text()


def _open_reference(pg, url: str) -> None:
    pg.goto(url + "/reference")
    pg.get_by_text("Your values").first.wait_for()
    wait_idle(pg)


def test_a_forged_identity_header_is_ignored_where_header_sign_in_is_not_configured(browser, app_url):
    # The module's app has no sign-in configured: a header naming an editor changes nothing.
    context = browser.new_context(
        viewport={"width": 1400, "height": 1000},
        extra_http_headers={"X-Remote-User": EDITOR, "X-Forwarded-User": EDITOR},
    )
    pg = context.new_page()
    pg.set_default_timeout(WAIT_MS)
    try:
        _open_reference(pg, app_url)
        sidebar = _sidebar_text(pg)
        assert "Not signed in" in sidebar and EDITOR not in sidebar
        assert "This server has no sign-in" in sidebar
    finally:
        context.close()


def test_the_configured_header_signs_the_user_in_and_only_editors_may_change_values(browser, tmp_path):
    secrets = tmp_path / "secrets.toml"
    secrets.write_text(
        f'[gas_ledger]\nsign_in = "header"\nidentity_header = "X-Remote-User"\neditors = ["{EDITOR}"]\n',
        encoding="utf-8",
    )
    with dashboard(
        tmp_path / "store.sqlite3", tmp_path / "streamlit.log", extra_args=("--secrets.files", str(secrets))
    ) as (url, _):
        url = url.rstrip("/")
        seen = {}
        for who, headers in [
            ("editor", {"X-Remote-User": EDITOR}),
            ("other", {"X-Remote-User": "anaesthetist@fernhollow.example"}),
            ("nobody", {}),
        ]:
            context = browser.new_context(viewport={"width": 1400, "height": 1000}, extra_http_headers=headers)
            pg = context.new_page()
            pg.set_default_timeout(WAIT_MS)
            try:
                _open_reference(pg, url)
                save = pg.locator('button[data-testid^="stBaseButton"]').filter(has_text="Save my values").first
                seen[who] = (_sidebar_text(pg), save.is_disabled())
            finally:
                context.close()
    assert f"Signed in as {EDITOR} (editor" in seen["editor"][0] and not seen["editor"][1]
    assert "Signed in as anaesthetist@fernhollow.example (may save plans)" in seen["other"][0]
    assert seen["other"][1]
    assert "Not signed in" in seen["nobody"][0] and seen["nobody"][1]


def test_two_app_processes_on_one_postgres_store_see_each_others_saves(browser, tmp_path):
    from storetest import postgres_database

    name = "Shared between two servers"
    with (
        postgres_database("gl_browser") as db,
        dashboard(db, tmp_path / "first.log") as (first, _),
        dashboard(db, tmp_path / "second.log") as (second, _),
    ):
        pages = []
        for _url in (first, second):
            context = browser.new_context(viewport={"width": 1400, "height": 1000})
            pg = context.new_page()
            pg.set_default_timeout(WAIT_MS)
            pages.append((context, pg))
        try:
            one, two = pages[0][1], pages[1][1]
            open_app(two, second.rstrip("/"))
            open_app(one, first.rstrip("/"))
            box = one.get_by_label("Plan name")
            box.fill(name)
            box.press("Enter")
            wait_idle(one)
            click_button(one, "Save")
            one.get_by_text(f"Saved '{name}' as version 1").wait_for()
            # The other process, after a reload, lists it first (the most recently saved).
            two.reload()
            two.get_by_text("What this case uses").wait_for()
            wait_idle(two)
            two.locator('[data-testid="stSelectbox"]').filter(has_text="Open a saved plan").first.click()
            two.get_by_role("option", name=name, exact=True).wait_for()
            two.screenshot(path=str(ARTIFACTS / "shared_postgres_second_process.png"))
        finally:
            for context, _ in pages:
                context.close()
