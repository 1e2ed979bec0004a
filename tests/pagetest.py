"""Shared parts of the page tests (Streamlit AppTest): an isolated store and a page runner.

A test file imports ``isolated_store`` (an autouse fixture: every test gets its own store
file) and ``page``.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from streamlit.testing.v1 import AppTest

from model.store import STORE_ENV

ROOT = Path(__file__).resolve().parents[1]
TIMEOUT = 120


@pytest.fixture(autouse=True)
def isolated_store(tmp_path, monkeypatch):
    path = tmp_path / "store.sqlite3"
    monkeypatch.setenv(STORE_ENV, str(path))
    return path


def page(name: str) -> AppTest:
    """Run ``pages/<name>`` once and check it raised nothing."""
    at = AppTest.from_file(str(ROOT / "pages" / name), default_timeout=TIMEOUT)
    at.run()
    assert not at.exception, [e.message for e in at.exception]
    return at
