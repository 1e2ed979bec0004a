"""A PostgreSQL database of its own for a test, on the server named by ``GAS_LEDGER_TEST_POSTGRES``.

Without that variable the PostgreSQL cases are skipped with the reason, except in CI
(``CI=true``), where they fail: CI must run them (.ci/run starts a throwaway server with
scripts/test_postgres.sh).
"""

from __future__ import annotations

import contextlib
import os
import uuid
from urllib.parse import urlsplit, urlunsplit

import pytest

#: Environment variable with the URL of a PostgreSQL user who may create databases.
PG_ENV = "GAS_LEDGER_TEST_POSTGRES"


def postgres_admin_url() -> str:
    """The test server's URL; skips (or, in CI, fails) when none is given."""
    url = os.environ.get(PG_ENV, "").strip()
    if url:
        return url
    in_ci = os.environ.get("CI", "").strip().lower() == "true"
    if not in_ci:  # a developer's machine without a server: say how to start one
        pytest.skip(
            f"no PostgreSQL server: set {PG_ENV} to the URL of a user who may create databases "
            '(eval "$(scripts/test_postgres.sh start DIR)" starts a throwaway one)'
        )
    pytest.fail(
        f"{PG_ENV} is not set: in CI the PostgreSQL store tests must run "
        "(.ci/run starts a server with scripts/test_postgres.sh)"
    )


@contextlib.contextmanager
def postgres_database(prefix: str = "gl_test"):
    """A new empty database on the test server; yields its URL and drops it afterwards."""
    import psycopg

    admin = postgres_admin_url()
    name = f"{prefix}_{uuid.uuid4().hex[:12]}"
    try:
        with psycopg.connect(admin, autocommit=True, connect_timeout=15) as con:
            con.execute(f'CREATE DATABASE "{name}"')
    except psycopg.OperationalError as exc:
        pytest.fail(f"the PostgreSQL test server at {PG_ENV} cannot be used: {exc}")
    parts = urlsplit(admin)
    url = urlunsplit(parts._replace(path="/" + name))
    try:
        yield url
    finally:
        with psycopg.connect(admin, autocommit=True, connect_timeout=15) as con:
            con.execute(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)')
