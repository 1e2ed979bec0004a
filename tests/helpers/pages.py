"""Running pages under Streamlit's AppTest (the store is isolated by tests/ui_pages/conftest.py)."""

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


def app() -> AppTest:
    """Run the entry point ``app.py`` once (its default page, Case plan) and check it raised nothing."""
    at = AppTest.from_file(str(ROOT / "app.py"), default_timeout=TIMEOUT)
    at.run()
    assert not at.exception, [e.message for e in at.exception]
    return at


def run(at: AppTest) -> AppTest:
    """Rerun ``at`` and check it raised nothing."""
    at.run()
    assert not at.exception, [e.message for e in at.exception]
    return at


def go(at: AppTest, page_file: str) -> AppTest:
    """Switch the app to ``pages/<page_file>`` and run it."""
    at.switch_page(f"pages/{page_file}")
    return run(at)


def click(at: AppTest, text: str) -> AppTest:
    """Click the button whose label ends with ``text`` (icons come first) and rerun."""
    next(b for b in at.button if b.label.endswith(text)).click()
    return run(at)


def metric_value(at: AppTest, label: str) -> str:
    """The value shown by the metric labelled ``label``."""
    return next(m.value for m in at.metric if m.label == label or m.label.startswith(label + " ("))
