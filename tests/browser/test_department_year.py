"""The Department year page in a real browser: its Excel workbook records the practice set on the page."""

from __future__ import annotations

import re

import pytest

from tests.browser.actions import go, open_app, set_year_maintenance_flow, shot, wait_idle

pytestmark = pytest.mark.browser


def test_year_workbook_records_the_practice_set_on_the_page(laptop, app_url, tmp_path):
    """Defect 6: the Excel workbook's Inputs sheet carries a practice changed on the page.

    The practice set on the page (not the scenario file's), with the prices, GWP values and the program's version.
    """
    import importlib.metadata

    import openpyxl

    pg = laptop
    open_app(pg, app_url)
    go(pg, "Department year", "Bottles bought per month")
    set_year_maintenance_flow(pg, "0.8")
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
