"""A hostile plan name in a real browser: shown as text on the page, escaped in the HTML report."""

from __future__ import annotations

import pytest

from tests.browser.actions import download_html_export, open_app, wait_idle
from tests.helpers import ROOT

pytestmark = pytest.mark.browser


@pytest.fixture(scope="module")
def app_url(fresh_app):
    """A dashboard of this module's own (its test saves a plan)."""
    return fresh_app[0]


@pytest.fixture(scope="module")
def store_path(fresh_app):
    return fresh_app[1]


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
    path, doc = download_html_export(page, tmp_path)
    assert "&lt;img src=x" in doc and "<img src=x" not in doc
    # Open the report itself: the name is text, nothing runs, nothing is fetched.
    requests = []
    page.on("request", lambda r: requests.append(r.url))
    page.goto(path.as_uri())
    page.wait_for_timeout(1500)
    assert page.evaluate("() => window.__pwned === undefined")
    assert page.locator("img[src='x']").count() == 0
    assert all(u.startswith("file:") or u.startswith("data:") for u in requests), requests
