"""The store in a PostgreSQL database, through psycopg 3 and a connection pool (the ``postgres`` extra)."""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager

from model.store.schema import POOL_MAX, POOL_MIN, STORE_ENV, StoreError, _first_line


class _Cursorless:
    """psycopg connection with the SQLite-style ``execute(sql, args)`` and ``?`` placeholders."""

    def __init__(self, con):
        self._con = con

    def execute(self, sql: str, args: tuple = ()):
        return self._con.execute(sql.replace("?", "%s"), args)


def _safe_url(url: str) -> str:
    """A PostgreSQL URL for messages: user, host, port and database, never the password."""
    try:
        try:
            from psycopg.conninfo import conninfo_to_dict

            d = conninfo_to_dict(url)
        except ImportError:  # no postgres extra: read the URL form alone
            from urllib.parse import urlsplit

            parts = urlsplit(url)
            d = {"user": parts.username, "host": parts.hostname, "port": parts.port, "dbname": parts.path[1:]}
    except Exception:  # noqa: BLE001 - an unparsable URL is shown by its scheme only
        return url.split("://", 1)[0] + "://..."
    user = f"{d['user']}@" if d.get("user") else ""
    port = f":{d['port']}" if d.get("port") else ""
    return f"postgresql://{user}{d.get('host') or ''}{port}/{d.get('dbname') or ''}"


class _Postgres:
    """A PostgreSQL database through psycopg 3 and a psycopg_pool connection pool."""

    dialect = "postgresql"
    for_update = " FOR UPDATE"
    #: Key of the advisory lock that serialises migrations of one database.
    _MIGRATION_LOCK = 0x6A5_1ED6

    def __init__(self, url: str):
        self.path = None
        self.url = url
        self.where = _safe_url(url)
        try:
            import psycopg
            from psycopg_pool import ConnectionPool
        except ImportError:
            raise StoreError(
                "store",
                self.where,
                "a PostgreSQL store needs the postgres extra: pip install 'fresh-gas-ledger[postgres]'",
            ) from None
        self._errors = (psycopg.Error,)
        # Check the address first: a pool would retry an unreachable server in the background.
        try:
            psycopg.connect(url, connect_timeout=15).close()
        except psycopg.Error as exc:
            raise StoreError(
                "store",
                self.where,
                f"cannot be reached ({_first_line(exc)}); check {STORE_ENV}, the server and its access rules",
            ) from None
        self._pool = ConnectionPool(
            url,
            min_size=POOL_MIN,
            max_size=POOL_MAX,
            open=True,
            timeout=60,
            kwargs={"autocommit": True, "connect_timeout": 15},
            name="gas-ledger-store",
        )

    @contextmanager
    def read(self, setup: bool = True) -> Iterator[_Cursorless]:
        try:
            with self._pool.connection() as con:
                yield _Cursorless(con)
        except self._errors as exc:
            raise StoreError("store", self.where, f"database error ({_first_line(exc)})") from None

    @contextmanager
    def write(self) -> Iterator[_Cursorless]:
        try:
            with self._pool.connection() as con, con.transaction():
                yield _Cursorless(con)
        except self._errors as exc:
            raise StoreError("store", self.where, f"database error, nothing saved ({_first_line(exc)})") from None

    def tables(self, con) -> set[str]:
        rows = con.execute(
            "SELECT table_name FROM information_schema.tables WHERE table_schema = current_schema()"
        ).fetchall()
        return {r[0] for r in rows}

    def lock_store(self, con) -> None:
        con.execute("SELECT pg_advisory_xact_lock(?)", (self._MIGRATION_LOCK,))

    def backup(self, con, found: int) -> None:
        """Nothing to do: the database server's own backups (pg_dump) cover PostgreSQL.

        The migration is one transaction, so a failure leaves the old schema as it was.
        """

    def integrity(self, con) -> str:
        con.execute("SELECT 1").fetchone()
        return "ok"

    def close(self) -> None:
        self._pool.close()
