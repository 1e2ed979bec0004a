"""The duckdb connection of a record set: bounded memory, spilling to a temporary folder, opened when needed."""

from __future__ import annotations

import os
import re
import tempfile

from model.base.errors import InputError
from model.io.record_files import _sql_str, file_failures

__all__ = ["LazyConnection", "connect", "plain_size"]


def connect(memory_limit: str | None = None, threads: int | None = None):
    """A duckdb connection with bounded memory that spills to a temporary folder."""
    import duckdb

    tmp = tempfile.mkdtemp(prefix="gas-ledger-duckdb-")
    con = duckdb.connect(config={"temp_directory": tmp, "preserve_insertion_order": True})
    if memory_limit:
        try:
            con.execute(f"SET memory_limit = {_sql_str(memory_limit)}")
        except duckdb.Error:
            import shutil

            con.close()
            shutil.rmtree(tmp, ignore_errors=True)
            raise InputError("--memory-limit", memory_limit, "a size with its unit, such as 3GB or 500MB") from None
    # Date-times with a zone are read as instants, whatever the server's own zone.
    con.execute("SET TimeZone = 'UTC'")
    # Threads from the machine: the cores this process may run on.
    con.execute(f"SET threads = {int(threads) if threads else _cores()}")
    # duckdb counts a query's progress (read by the audit's progress line) without drawing its own bar.
    con.execute("SET enable_progress_bar = true")
    con.execute("SET enable_progress_bar_print = false")
    return con, tmp


_SIZE = re.compile(r"^\s*[0-9]+(\.[0-9]+)?\s*(b|bytes|kb|mb|gb|tb|kib|mib|gib|tib|k|m|g|t|%)\s*$", re.IGNORECASE)


def plain_size(memory_limit) -> bool:
    """Whether there is no memory limit or it is a size duckdb surely takes ("3GB", "500 MB", "80%").

    Any other text is handed to duckdb at once, which says if it is wrong.
    """
    return memory_limit is None or bool(_SIZE.match(str(memory_limit)))


class LazyConnection:
    """A duckdb connection (:func:`connect`) opened on first use.

    Until then, settings and views (``SET ...``, ``CREATE ...`` statements run with
    ``execute``) are kept in order and run when the connection opens; any other use opens
    it. Opening runs them inside :func:`model.io.record_files.file_failures`, so a file
    duckdb cannot read is named as when the views are made at once.
    """

    def __init__(self, memory_limit, threads, specs):
        self._args = (memory_limit, threads)
        self._specs = specs
        self._con = None
        self._tmp = None
        self._pending: list[str] = []

    @property
    def opened(self) -> bool:
        """Whether the connection has been opened."""
        return self._con is not None

    def _open(self):
        if self._con is None:
            con, self._tmp = connect(*self._args)
            self._con = con
            with file_failures(self._specs):
                for sql in self._pending:
                    con.execute(sql)
            self._pending = []
        return self._con

    def execute(self, sql, *args):
        """Run ``sql``: a setting or a view is kept until the connection opens; anything else opens it."""
        words = sql.split(None, 1)
        if self._con is None and not args and words and words[0].upper() in ("SET", "CREATE"):
            self._pending.append(sql)
            return self
        return self._open().execute(sql, *args)

    def __getattr__(self, name):
        return getattr(self._open(), name)

    def close(self) -> None:
        """Close the connection (if it was opened) and remove its spill folder."""
        import shutil

        try:
            if self._con is not None:
                self._con.close()
        finally:
            if self._tmp:
                shutil.rmtree(self._tmp, ignore_errors=True)


def _cores() -> int:
    """Cores this process may run on."""
    try:
        return max(len(os.sched_getaffinity(0)), 1)
    except AttributeError:  # not on Linux
        return max(os.cpu_count() or 1, 1)
