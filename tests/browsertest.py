"""Shared parts of the browser tests: Debian's chromium driven by Playwright.

A test file imports ``browser`` (a module-scoped fixture) from here.
"""

from __future__ import annotations

import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "benchmarks"))
from bench_load import CHROMIUM  # noqa: E402  (the one way the tests start the app and browser)
from bench_load import CHROMIUM_ARGS as LAUNCH_ARGS  # noqa: E402


@pytest.fixture(scope="module")
def browser():
    if not Path(CHROMIUM).exists():
        pytest.fail(f"{CHROMIUM} is missing: install Debian's chromium (scripts/test.sh does it as root)")
    from playwright.sync_api import sync_playwright

    with sync_playwright() as p:
        b = p.chromium.launch(executable_path=CHROMIUM, args=LAUNCH_ARGS)
        yield b
        b.close()
