"""Real-browser tests of issue 12's dashboard defects (chromium through Playwright, marker ``browser``).

Each test's docstring names the defect it covers. Screenshots at 1366 x 768 (a laptop) go
to test-artifacts/ (ignored by git).
"""

from __future__ import annotations

import re

import pytest
from playwright.sync_api import TimeoutError as PlaywrightTimeout
from test_browser import (  # noqa: F401
    ARTIFACTS,
    WAIT_MS,
    app_url,
    browser,
    click_button,
    metric_text,
    open_app,
    open_saved_plan,
    store_path,
    wait_idle,
)

from model.reference import DEFAULT_REFERENCE
from model.store import Store

pytestmark = pytest.mark.browser


@pytest.fixture
def laptop(browser):  # noqa: F811  (the browser fixture of test_browser)
    context = browser.new_context(viewport={"width": 1366, "height": 768}, accept_downloads=True)
    pg = context.new_page()
    pg.set_default_timeout(WAIT_MS)
    yield pg
    context.close()


def go(pg, title: str, marker: str) -> None:
    pg.locator('[data-testid="stSidebarNav"]').get_by_role("link", name=title).first.click()
    pg.get_by_role("heading", name=title).first.wait_for()
    pg.get_by_text(marker).first.wait_for()
    wait_idle(pg)


def shot(pg, name: str) -> None:
    ARTIFACTS.mkdir(exist_ok=True)
    pg.wait_for_timeout(500)
    pg.screenshot(path=str(ARTIFACTS / f"trust_{name}.png"))


def field(pg, label: str):
    return pg.get_by_label(label, exact=True).first


def test_case_plan_inputs_survive_a_visit_to_compare(laptop, app_url):  # noqa: F811
    """Defect 1: Case plan -> open a saved plan -> Compare -> back: name, weight, age kept, Save enabled."""
    pg = laptop
    open_saved_plan(pg, app_url, "Laparoscopic cholecystectomy, high flow")
    weight = field(pg, "Patient weight")
    weight.fill("91 kg")
    weight.press("Enter")
    wait_idle(pg)
    liquid = metric_text(pg, "Liquid agent")
    go(pg, "Compare", "Against the baseline")
    go(pg, "Case plan", "What this case uses")
    assert field(pg, "Plan name").input_value() == "Laparoscopic cholecystectomy, high flow"
    assert field(pg, "Patient weight").input_value() == "91 kg"
    assert field(pg, "Patient age").input_value() != ""
    assert metric_text(pg, "Liquid agent") == liquid
    assert pg.locator('[data-testid="stAlertContentError"]').count() == 0
    save = pg.locator('button[data-testid^="stBaseButton"]').filter(has_text=re.compile("Save$")).first
    assert save.is_enabled()
    shot(pg, "case_plan_after_compare")


def test_going_back_to_the_defaults_empties_the_form(laptop, app_url, store_path):  # noqa: F811
    """Defect 9: after "Go back to the built-in defaults" the form shows the defaults, and saving it
    again does not bring the old value back.
    """
    pg = laptop
    open_app(pg, app_url)
    go(pg, "Reference", "Your values")
    default = DEFAULT_REFERENCE.prices.bottle["sevoflurane"]
    box = field(pg, "Sevoflurane per bottle")
    box.fill("333")
    click_button(pg, "Save my values")
    pg.get_by_text("every page now uses them").wait_for()
    wait_idle(pg)
    # As a user would: open the list of earlier sets and press the button until the page says
    # it took (a click that lands while the page is still rerunning can be lost under load).
    done = pg.get_by_text("Built-in defaults in use")
    for _ in range(4):
        back = (
            pg.locator('button[data-testid^="stBaseButton"]')
            .filter(has_text=re.compile("Go back to the built-in defaults$"))
            .first
        )
        if not back.is_visible():
            pg.get_by_text(re.compile(r"Earlier sets of values")).first.click()
            back.wait_for()
        back.click()
        try:
            done.wait_for(timeout=WAIT_MS // 4)
            break
        except PlaywrightTimeout:
            wait_idle(pg)
    done.wait_for()
    wait_idle(pg)
    shot(pg, "reference_after_defaults")
    assert float(field(pg, "Sevoflurane per bottle").input_value()) == pytest.approx(default)
    click_button(pg, "Save my values")
    pg.get_by_text("every page now uses them").wait_for()
    wait_idle(pg)
    assert "bottle" not in Store(store_path).load_overrides().get("prices", {})


def test_year_workbook_records_the_practice_set_on_the_page(laptop, app_url, tmp_path):  # noqa: F811
    """Defect 6: after a change of practice on the page, the Excel workbook's Inputs sheet carries it
    (not the scenario file's), with the prices, GWP values and the program's version.
    """
    import importlib.metadata

    import openpyxl

    pg = laptop
    open_app(pg, app_url)
    go(pg, "Department year", "Bottles bought per month")
    pg.get_by_text("Practice change and uncertainty").first.click()
    pg.get_by_text("Set maintenance flow").first.click()
    wait_idle(pg)
    flow = field(pg, "Maintenance flow (L/min)")
    flow.fill("0.8")
    flow.press("Enter")
    wait_idle(pg)
    shot(pg, "department_year_practice")
    with pg.expect_download() as dl:
        pg.locator('[data-testid="stDownloadButton"]').filter(has_text=re.compile("Excel$")).first.click()
    path = tmp_path / "year.xlsx"
    dl.value.save_as(path)
    ws = openpyxl.load_workbook(path)["Inputs"]
    rows = {r[0]: r[1] for r in ws.iter_rows(values_only=True) if r and r[0]}
    assert rows["maintenance flow"] == "0.8 L/min"
    assert "practice edited on this page" in rows["scenario"]
    assert rows["program"] == "fresh-gas-ledger " + importlib.metadata.version("fresh-gas-ledger")
    assert "prices in use" in rows and "GWP values" in rows
