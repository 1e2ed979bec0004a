"""The app's navigation in a real browser, when a direct link to a page is the first request a new server gets."""

from __future__ import annotations

import contextlib
from pathlib import Path

import pytest

from tests.browser.actions import dashboard, wait_idle

pytestmark = pytest.mark.browser


@contextlib.contextmanager
def serve_app(log_dir: Path, store: Path):
    """Run ``streamlit run serve.py`` with a store of its own; yields its URL.

    serve.py is app.py with its warm start; the server listens on a free loopback port.
    """
    with dashboard(store, log_dir / "streamlit.log") as (url, _):
        yield url.rstrip("/")


def test_a_direct_link_as_the_first_request_gets_the_app_navigation(page, tmp_path):
    # A bookmark to a page, opened first after a server start, must still show the app's
    # own sections and titles (not one entry per file in pages/, nor an "app" entry).
    with serve_app(tmp_path, tmp_path / "store.sqlite3") as url:
        page.goto(url + "/compare")
        page.get_by_text("Against the baseline").first.wait_for()
        wait_idle(page)
        nav = page.locator('[data-testid="stSidebarNav"]')
        assert nav.get_by_text("The department").count() == 1
        assert nav.get_by_role("link", name="Department year").count() == 1
        assert nav.get_by_role("link", name="app", exact=True).count() == 0
