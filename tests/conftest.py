"""Fixtures every test folder may use, the Hypothesis profiles, and the order of the tests.

Hypothesis profiles, chosen by ``HYPOTHESIS_PROFILE`` (default ``ci`` when ``CI=true``,
else ``dev``):

- ``dev``: Hypothesis' defaults, each test's own example count; random examples explore.
- ``ci``: the same counts, derandomized (a fixed seed: a run is repeatable), and a failure
  prints the blob that reproduces it.
- ``fuzz``: at least 2,000 examples for every property and fuzz test, derandomization off:
  ``HYPOTHESIS_PROFILE=fuzz pytest tests/model/io -k fuzz`` for a long hunt.

The ``slow`` marker (pyproject.toml) marks the slowest tests that are not browser tests:
``pytest -m "not slow and not browser" -n 2`` is a quick local run.
"""

from __future__ import annotations

import os
import tempfile

import pytest
from hypothesis import HealthCheck, settings

from model.store import STORE_ENV

FUZZ_EXAMPLES = 2000

settings.register_profile("dev", settings())
settings.register_profile("ci", settings(derandomize=True, print_blob=True))
settings.register_profile(
    "fuzz",
    settings(
        max_examples=FUZZ_EXAMPLES,
        deadline=None,
        suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large, HealthCheck.filter_too_much],
    ),
)
PROFILE = os.environ.get("HYPOTHESIS_PROFILE") or (
    "ci" if os.environ.get("CI", "").strip().lower() == "true" else "dev"
)
settings.load_profile(PROFILE)


def pytest_report_header(config):
    return f"hypothesis profile: {PROFILE}"


def pytest_collection_modifyitems(config, items):
    """Run the ``slow`` tests first; under the ``fuzz`` profile, raise each example count.

    Slow tests first: with ``-n 2`` a long test collected last would leave one worker
    waiting for the other at the end of the run. Otherwise the order is pytest's.
    """
    items.sort(key=lambda item: item.get_closest_marker("slow") is None)  # stable: the rest keep their order
    if PROFILE != "fuzz":
        return
    for item in items:
        test = getattr(item, "obj", None)
        own = getattr(test, "_hypothesis_internal_use_settings", None)  # set by @settings / @given
        if own is not None and own.max_examples < FUZZ_EXAMPLES:
            test._hypothesis_internal_use_settings = settings(own, max_examples=FUZZ_EXAMPLES)


@pytest.fixture
def isolated_store(tmp_path, monkeypatch):
    """A store file of the test's own, named by the environment variable the app reads."""
    path = tmp_path / "store.sqlite3"
    monkeypatch.setenv(STORE_ENV, str(path))
    return path


@pytest.fixture(scope="module")
def scratch(tmp_path_factory):
    """A folder for fuzz files; duckdb's spill folders go there too, not to /tmp."""
    folder = tmp_path_factory.mktemp("fuzz")
    old = tempfile.tempdir
    tempfile.tempdir = str(folder)
    yield folder
    tempfile.tempdir = old
