"""Running a page under Streamlit's AppTest (the store is isolated by tests/ui_pages/conftest.py)."""

from __future__ import annotations

from streamlit.testing.v1 import AppTest

from tests.helpers import ROOT

TIMEOUT = 120


def page(name: str) -> AppTest:
    """Run ``pages/<name>`` once and check it raised nothing."""
    at = AppTest.from_file(str(ROOT / "pages" / name), default_timeout=TIMEOUT)
    at.run()
    assert not at.exception, [e.message for e in at.exception]
    return at
