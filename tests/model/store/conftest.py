"""The store tests run on SQLite and on PostgreSQL (tests/helpers/postgres.py)."""

from __future__ import annotations

import pytest

from model.store import Store
from tests.helpers.postgres import postgres_database

BACKENDS = ("sqlite", "postgresql")


@pytest.fixture(params=BACKENDS)
def store_location(request, tmp_path):
    """Where a test's store lives: an SQLite file, or a PostgreSQL URL."""
    if request.param == "sqlite":
        yield str(tmp_path / "store.sqlite3")
    else:
        with postgres_database() as url:
            yield url


@pytest.fixture
def open_store():
    """``open_store(location)`` opens a Store and closes it when the test ends."""
    opened: list[Store] = []

    def _open(location):
        s = Store(location)
        opened.append(s)
        return s

    yield _open
    for s in opened:
        s.close()
