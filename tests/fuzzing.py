"""Shared pieces of the fuzz tests: example settings and a scratch folder for fuzz files."""

from __future__ import annotations

import hashlib
import os
import tempfile
from pathlib import Path

import pytest
from hypothesis import HealthCheck, settings

# In CI (CI=true) the examples are derandomized, so a run is repeatable; local runs explore.
FUZZ = settings(
    max_examples=1000,
    deadline=None,
    derandomize=bool(os.environ.get("CI")),
    suppress_health_check=[
        HealthCheck.too_slow,
        HealthCheck.data_too_large,
        HealthCheck.filter_too_much,
        HealthCheck.function_scoped_fixture,
    ],
)
#: For readers that take a tenth of a second an example (duckdb, SQLite).
SLOW = settings(FUZZ, max_examples=80)


@pytest.fixture(scope="module")
def scratch(tmp_path_factory):
    """A folder for fuzz files; duckdb's spill folders go there too, not to /tmp."""
    folder = tmp_path_factory.mktemp("fuzz")
    old = tempfile.tempdir
    tempfile.tempdir = str(folder)
    yield folder
    tempfile.tempdir = old


def store_refused_untouched_or_works(path: Path) -> None:
    """Open a store file: refused with one line and left as it was, or it works."""
    from model.base.errors import InputError
    from model.store import Store, StoreError

    before = hashlib.sha256(path.read_bytes()).hexdigest()
    try:
        s = Store(path)
    except StoreError as exc:
        assert "\n" not in str(exc)
        assert hashlib.sha256(path.read_bytes()).hexdigest() == before
        return
    try:  # accepted: it works, or refuses with the store's own error, never a traceback
        s.names("scenario")
        s.save("plan", "fuzz", "x")
        assert s.get("plan", "fuzz").body == "x"
    except InputError:
        pass
