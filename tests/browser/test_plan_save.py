"""Saving a plan in a real browser: a lower flow, saved, reloaded, and its Excel workbook read back."""

from __future__ import annotations

import openpyxl
import pytest

from tests.browser.actions import (
    ARTIFACTS,
    click_button,
    edit_cell,
    metric_number,
    metric_text,
    open_saved_plan,
    wait_idle,
    wait_metric_change,
)

pytestmark = pytest.mark.browser


@pytest.fixture(scope="module")
def app_url(fresh_app):
    """A dashboard of this module's own (its tests save plans)."""
    return fresh_app[0]


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
    head = [c.value for c in ws[1]]  # columns by their headings (the safety column comes first)
    rows = {r[head.index("figure")]: r[head.index("value")] for r in ws.iter_rows(min_row=2, values_only=True)}
    assert rows["Liquid agent"] == pytest.approx(after, abs=0.05)
