"""Fixtures of the browser tests: Debian's chromium driven by Playwright, and the app it opens.

One chromium per test process (session scope). ``app_url`` is one dashboard per test
process, shared by the tests that change nothing another test could see (they only read,
or change what their own browser session holds), so the pages' caches (the demo year, the
record audit) are filled once. A test that saves to the store uses ``fresh_app``: a
dashboard and store of its test module's own, ``(url, store path)``.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from tests.browser.actions import CHROMIUM, LAUNCH_ARGS, WAIT_MS, dashboard


@pytest.fixture(scope="session")
def browser():
    if not Path(CHROMIUM).exists():
        pytest.fail(f"{CHROMIUM} is missing: install Debian's chromium (scripts/test.sh does it as root)")
    from playwright.sync_api import sync_playwright

    with sync_playwright() as p:
        b = p.chromium.launch(executable_path=CHROMIUM, args=LAUNCH_ARGS)
        yield b
        b.close()


@pytest.fixture(scope="session")
def app_url(tmp_path_factory):
    """The shared dashboard's URL (no trailing slash): its store is changed by no test."""
    tmp = tmp_path_factory.mktemp("shared-app")
    with dashboard(tmp / "store.sqlite3", tmp / "streamlit.log") as (url, _):
        yield url.rstrip("/")


@pytest.fixture(scope="module")
def fresh_app(tmp_path_factory):
    """A dashboard with a store of the module's own: ``(url, store path)``."""
    tmp = tmp_path_factory.mktemp("own-app")
    store = tmp / "store.sqlite3"
    with dashboard(store, tmp / "streamlit.log") as (url, _):
        yield url.rstrip("/"), store


def _context_page(browser, width: int, height: int):
    context = browser.new_context(viewport={"width": width, "height": height}, accept_downloads=True)
    pg = context.new_page()
    pg.set_default_timeout(WAIT_MS)
    return context, pg


@pytest.fixture
def page(browser):
    """A new browser context at 1400 x 1000."""
    context, pg = _context_page(browser, 1400, 1000)
    yield pg
    context.close()


@pytest.fixture
def laptop(browser):
    """A new browser context at a laptop's 1366 x 768."""
    context, pg = _context_page(browser, 1366, 768)
    yield pg
    context.close()
