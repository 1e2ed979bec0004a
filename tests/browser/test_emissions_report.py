"""The emissions report page in a real browser: its HTML report carries the headline figure and opens offline."""

from __future__ import annotations

import pytest

from tests.browser.actions import download_html_export, metric_text, open_app, wait_idle

pytestmark = pytest.mark.browser


def test_emissions_report_html_carries_the_headline_figure(page, app_url, tmp_path):
    open_app(page, app_url)
    page.get_by_role("link", name="Emissions report").first.click()
    page.get_by_text("What drove the change").first.wait_for()
    wait_idle(page)
    figure = metric_text(page, "Use-based, IPCC AR6 GWP100")  # e.g. "23.7 t CO2e"
    assert figure.endswith("t CO2e")
    path, doc = download_html_export(page, tmp_path)
    headline = doc.split("id='headline'>", 1)[1].split("</p>", 1)[0]
    assert f": {figure} (IPCC AR6 GWP100" in headline and "down" in headline
    assert "Method statement" in doc and "Ang B.W." in doc and "Estimates support planning" in doc
    # The report opens offline: its charts are drawn from the inlined plotly (the waterfall among them).
    page.goto(path.as_uri())
    page.locator(".js-plotly-plot").first.wait_for()
    assert page.locator(".js-plotly-plot").count() >= 5
    assert page.get_by_text("What drove the change (additive LMDI-I)").count() >= 1
