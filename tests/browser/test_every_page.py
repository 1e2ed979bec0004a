"""Every page of the app renders in a real browser without an exception, and is screenshotted."""

from __future__ import annotations

import pytest

from tests.browser.actions import ARTIFACTS, open_app, wait_idle, wait_plots_drawn

pytestmark = pytest.mark.browser


@pytest.mark.parametrize(
    "title, slug, marker",
    [
        ("Case plan", "case_plan", "What this case uses"),
        ("Compare", "compare", "Against the baseline"),
        ("Reference", "reference", "Your values"),
        ("Department year", "department_year", "Bottles bought per month"),
        ("Record audit", "record_audit", "Rows set aside"),
        ("Emissions report", "emissions_report", "What drove the change"),
        ("Trends", "trends", "Run-chart checks"),
        ("Orders", "orders", "What if"),
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
    wait_plots_drawn(page)
    assert page.locator('[data-testid="stException"]').count() == 0
    page.screenshot(path=str(ARTIFACTS / f"page_{slug}.png"))
