"""The Reference page in a real browser: going back to the built-in defaults empties the form (issue 12, defect 9)."""

from __future__ import annotations

import re

import pytest
from playwright.sync_api import TimeoutError as PlaywrightTimeout

from model.reference import DEFAULT_REFERENCE
from model.store import Store
from tests.browser.actions import WAIT_MS, click_button, field, go, open_app, shot, wait_idle

pytestmark = pytest.mark.browser


@pytest.fixture(scope="module")
def app_url(fresh_app):
    """A dashboard of this module's own (its test saves reference values)."""
    return fresh_app[0]


@pytest.fixture(scope="module")
def store_path(fresh_app):
    return fresh_app[1]


def test_going_back_to_the_defaults_empties_the_form(laptop, app_url, store_path):
    """Defect 9: after "Go back to the built-in defaults" the form shows the defaults.

    Saving it again does not bring the old value back.
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
    versions = len(Store(store_path).history("overrides", "dashboard"))
    click_button(pg, "Save my values")
    # The form shows the values in use, so saving it changes nothing and makes no new version.
    pg.get_by_text("nothing saved, no new version").wait_for()
    wait_idle(pg)
    assert "bottle" not in Store(store_path).load_overrides().get("prices", {})
    assert len(Store(store_path).history("overrides", "dashboard")) == versions


def test_enter_in_a_price_field_saves_nothing_and_the_button_saves_what_is_listed(laptop, app_url, store_path):
    """Enter in a price enters that value only; the changes are listed old -> new, and Save keeps them."""
    pg = laptop
    open_app(pg, app_url)
    go(pg, "Reference", "Your values")
    before = len(Store(store_path).history("overrides", "dashboard"))
    box = field(pg, "Desflurane per bottle")
    box.fill("444")
    box.press("Enter")
    pg.get_by_text("To save: 1 changed value(s)").wait_for()
    wait_idle(pg)
    assert len(Store(store_path).history("overrides", "dashboard")) == before
    pg.get_by_text("To save: 1 changed value(s)").scroll_into_view_if_needed()
    shot(pg, "reference_changes_to_save")
    click_button(pg, "Save my values")
    pg.get_by_text("every page now uses them").wait_for()
    wait_idle(pg)
    assert len(Store(store_path).history("overrides", "dashboard")) == before + 1
    assert Store(store_path).load_overrides()["prices"]["bottle"]["desflurane"] == 444
    assert pg.get_by_text(re.compile(r"prices\.bottle\.desflurane .* (->|→) 444")).count() == 1
