"""The Trends page in a real browser: a programme start typed in changes the limits and the signals listed."""

from __future__ import annotations

import pytest

from tests.browser.actions import field, open_app, wait_idle

pytestmark = pytest.mark.browser


def test_a_change_date_lists_the_effect_and_empty_lists_the_two_runs(page, app_url):
    open_app(page, app_url)
    page.get_by_role("link", name="Trends").first.click()
    page.get_by_text("Run-chart checks").first.wait_for()
    wait_idle(page)
    # The demo's invented programme start is already typed in: its effect is listed.
    assert page.get_by_text("level change at the programme start").count() >= 1
    assert page.locator(".js-plotly-plot").count() >= 4
    box = field(page, "Programme start (first month, YYYY-MM; empty: none)")
    box.fill("")
    box.press("Enter")
    page.get_by_text("2026-01 to 2026-11").first.wait_for()
    wait_idle(page)
    assert page.get_by_text("level change at the programme start").count() == 0
    assert page.get_by_text("2025-04 to 2025-12").count() >= 1
    box.fill("2031-05")
    box.press("Enter")
    page.get_by_text("Programme start: got '2031-05'").first.wait_for()
