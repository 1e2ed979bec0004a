"""Two app processes on one PostgreSQL store in a real browser: each sees the other's saves."""

from __future__ import annotations

import pytest

from tests.browser.actions import ARTIFACTS, WAIT_MS, click_button, dashboard, open_app, wait_idle
from tests.helpers.postgres import postgres_database

pytestmark = pytest.mark.browser


def test_two_app_processes_on_one_postgres_store_see_each_others_saves(browser, tmp_path):
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
