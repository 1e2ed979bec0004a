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


def capture_downloads(monkeypatch) -> dict:
    """Record every download button a page draws in a container: key -> (file name, data).

    The data of a deferred download (a function) is kept as the function; :func:`download`
    builds it, as a click would.
    """
    from streamlit.delta_generator import DeltaGenerator

    seen: dict = {}
    original = DeltaGenerator.download_button

    def spy(self, label, data=None, file_name=None, *args, **kwargs):
        seen[kwargs.get("key")] = (file_name, data)
        return original(self, label, data, file_name, *args, **kwargs)

    monkeypatch.setattr(DeltaGenerator, "download_button", spy)
    return seen


def download(seen: dict, key: str) -> bytes:
    """The bytes of the download with ``key`` (built now if deferred)."""
    data = seen[key][1]
    data = data() if callable(data) else data
    return data.encode("utf-8") if isinstance(data, str) else bytes(data)
