"""Case plan in a real browser: a bad entry is a message, and inputs survive a visit to another page."""

from __future__ import annotations

import re

import pytest

from tests.browser.actions import (
    ARTIFACTS,
    edit_cell,
    field,
    go,
    metric_text,
    open_app,
    open_saved_plan,
    shot,
    wait_idle,
)

pytestmark = pytest.mark.browser


def test_invalid_entry_shows_message_not_traceback(page, app_url):
    open_app(page, app_url)
    before = metric_text(page, "Liquid agent")
    edit_cell(page, 1, 2, "lots")
    page.get_by_text("Phases table, row 2, O2 flow").wait_for()
    wait_idle(page)
    assert metric_text(page, "Liquid agent") == before
    assert page.locator('[data-testid="stException"]').count() == 0
    page.screenshot(path=str(ARTIFACTS / "case_plan_invalid_entry.png"))


def test_case_plan_inputs_survive_a_visit_to_compare(laptop, app_url):
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
