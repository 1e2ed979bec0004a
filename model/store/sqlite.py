"""The store in an SQLite file.

Connections, the write transaction, backups, and the read-only check of a file before
anything opens it.
"""

from __future__ import annotations

import os
import sqlite3
import tempfile
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path

from model.store.schema import _REQUIRED, BUSY_TIMEOUT_MS, SCHEMA_VERSION, STORE_ENV, StoreError, _ignored


class _SQLite:
    """An SQLite file: a new connection per operation (cheap), WAL set once per Store."""

    dialect = "sqlite"
    for_update = ""

    def __init__(self, path: Path):
        self.path = path
        self.where = str(path)
        try:
            self.path.parent.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            raise StoreError("store file", str(self.path), f"its folder cannot be made ({exc.strerror})") from None
        self._wal = False

    def _foreign(self, exc) -> StoreError:
        said = os_refusal(self.path, exc)
        if said is not None:
            return said
        return StoreError(
            "store file",
            str(self.path),
            f"is not a Fresh Gas Ledger store ({exc}); set {STORE_ENV} to another file or move this one aside",
        )

    def _connect(self, setup: bool = True) -> sqlite3.Connection:
        try:
            con = sqlite3.connect(self.path, timeout=BUSY_TIMEOUT_MS / 1000, isolation_level=None)
        except (OSError, sqlite3.Error) as exc:
            raise StoreError("store file", str(self.path), f"cannot be opened ({exc})") from None
        try:
            con.execute(f"PRAGMA busy_timeout = {BUSY_TIMEOUT_MS}")
            if not setup:  # only look: a foreign file must stay byte for byte as it was
                return con
            if not self._wal:  # WAL is a property of the file: set it once per Store
                con.execute("PRAGMA journal_mode = WAL")
                self._wal = True
            con.execute("PRAGMA synchronous = FULL")
            con.execute("PRAGMA foreign_keys = ON")
        except sqlite3.DatabaseError as exc:
            con.close()
            raise self._foreign(exc) from None
        return con

    @contextmanager
    def read(self, setup: bool = True) -> Iterator[sqlite3.Connection]:
        con = self._connect(setup)
        try:
            yield con
        except sqlite3.DatabaseError as exc:
            # A page damaged past what the opening check reads: one line, never a traceback.
            if isinstance(exc, sqlite3.OperationalError) and "locked" in str(exc):
                raise
            said = os_refusal(self.path, exc)
            if said is not None:
                raise said from None
            raise StoreError(
                "store file",
                str(self.path),
                f"is damaged ({exc}); nothing was changed by this "
                f"request; restore it from a backup or set {STORE_ENV} to another file",
            ) from None
        finally:
            con.close()

    @contextmanager
    def write(self) -> Iterator[sqlite3.Connection]:
        """One write transaction, taken at once, so writers queue rather than deadlock."""
        with self.read() as con:
            con.execute("BEGIN IMMEDIATE")
            try:
                yield con
            except BaseException:
                # SQLite has already rolled back after some errors (a full disk): then a
                # ROLLBACK of our own would fail and hide what went wrong.
                if con.in_transaction:
                    with _ignored(sqlite3.Error):
                        con.execute("ROLLBACK")
                raise
            con.execute("COMMIT")

    def tables(self, con) -> set[str]:
        try:
            return {r[0] for r in con.execute("SELECT name FROM sqlite_master WHERE type = 'table'")}
        except sqlite3.DatabaseError as exc:
            raise self._foreign(exc) from None

    def lock_store(self, con) -> None:
        """The write transaction already holds the whole file."""

    def backup(self, con, found: int) -> Path:
        """Copy the store beside itself (kept; the way back from a migration).

        Runs while the migration's write transaction holds the file, so the copy is the
        state being migrated; read through a second connection (SQLite's backup from the
        writing connection itself would wait forever), written to a temporary name in the
        same folder, then renamed.
        """
        suffix = f".schema{found}.bak"
        target = self.path.with_name(self.path.name + suffix)
        n = 1
        while target.exists():
            target = self.path.with_name(f"{self.path.name}{suffix}.{n}")
            n += 1
        try:
            fd, tmp = tempfile.mkstemp(prefix=target.name + ".", suffix=".tmp", dir=self.path.parent)
        except OSError as exc:
            raise StoreError(
                "store file",
                str(self.path),
                f"cannot be upgraded: its copy cannot be written beside it ({exc.strerror}); the store is unchanged",
            ) from None
        os.close(fd)
        try:
            with self.read() as src:
                _copy_database(src, Path(tmp))
            os.replace(tmp, target)
        except BaseException:
            with _ignored(OSError):
                os.unlink(tmp)
            raise
        return target

    def integrity(self, con) -> str:
        return con.execute("PRAGMA integrity_check").fetchone()[0]

    def close(self) -> None:
        """Nothing stays open between operations."""


def _copy_database(src: sqlite3.Connection, target: Path) -> None:
    """Copy an open database to a new file, flushed to disk."""
    dst = sqlite3.connect(target)
    try:
        src.backup(dst)
    finally:
        dst.close()
    with open(target, "rb+") as fh:
        os.fsync(fh.fileno())


def check_store_file(path: str | os.PathLike) -> int:
    """Check, read-only, that a file is a store of ours before anything else opens it.

    Parameters
    ----------
    path : str or PathLike
        The store file.

    Returns
    -------
    int
        0 for a file that does not exist yet, is empty or holds no table (a new store);
        else its schema version (a newer one than this program's is returned as found).

    Raises
    ------
    StoreError
        One line, for anything that is not a valid store of ours: not an SQLite file,
        damaged (SQLite's ``quick_check`` of every page), names that are not UTF-8, a
        ``meta`` table of another layout, no schema version, or a table or column of its
        version missing. The file is opened
        read-only and left byte for byte as it was.
    """
    p = Path(path)
    con = _open_read_only(p)
    if con is None:
        return 0
    try:
        tables = {_text(r[0]) for r in con.execute("SELECT name FROM sqlite_master WHERE type = 'table'")}
        if not tables:
            return 0
        if "meta" not in tables:
            raise _refusal(p, f"is an SQLite file of another program (tables: {', '.join(sorted(tables)[:5])})")
        columns = {
            t: {_text(r[1]) for r in con.execute(f'PRAGMA table_info("{t}")')} for t in tables if t.isidentifier()
        }
        version = _schema_version(con, p, columns)
        _check_tables(p, version, columns)
        if version <= SCHEMA_VERSION:  # pages and indexes sound (reads every page once)
            found = _text(con.execute("PRAGMA quick_check(1)").fetchone()[0])
            if found != "ok":
                raise _refusal(p, f"is a damaged store ({found[:120]})")
        return version
    except sqlite3.Error as exc:
        said = os_refusal(p, exc)
        if said is not None:
            raise said from None
        raise _refusal(p, f"is not a Fresh Gas Ledger store ({exc})") from None
    finally:
        con.close()


#: What the operating system said, by SQLite's primary result code (sqlite.org/rescode.html),
#: and what to do about it. None of these says anything about the file's content.
_OS_SAID = {
    sqlite3.SQLITE_READONLY: (
        "cannot be written: the file or its folder is read-only",
        "give the account that runs the tool write access to the file and its folder (SQLite "
        "also writes {name}-wal and {name}-shm beside it)",
    ),
    sqlite3.SQLITE_FULL: (
        "cannot be written: the disk is full",
        "free some space on the disk that holds it and try again",
    ),
    sqlite3.SQLITE_CANTOPEN: (
        "cannot be opened",
        "check that the account that runs the tool may read and write the file and its folder",
    ),
    sqlite3.SQLITE_PERM: (
        "cannot be used: the operating system refused access",
        "give the account that runs the tool access to the file and its folder",
    ),
    sqlite3.SQLITE_IOERR: (
        "cannot be read or written: the operating system reported an input/output error",
        "check the disk (a full disk, a read-only or disconnected drive); then try again",
    ),
}


def os_refusal(path: Path, exc: BaseException) -> StoreError | None:
    """The one-line error for what the operating system said (read-only, full, no access).

    None when SQLite's error is about the file itself (not a database, damaged): those
    are :func:`_refusal`. A store refused here is valid: the message never suggests
    moving it aside, and says that nothing was changed.
    """
    if isinstance(exc, OSError):
        what = exc.strerror or str(exc)
        return StoreError("store file", str(path), f"cannot be used ({what}); nothing was changed")
    code = getattr(exc, "sqlite_errorcode", None)
    if not isinstance(code, int) or (code & 0xFF) not in _OS_SAID:
        return None
    why, advice = _OS_SAID[code & 0xFF]
    return StoreError(
        "store file",
        str(path),
        f"{why} ({exc}); nothing was changed by this request and every saved version is kept; "
        + advice.format(name=path.name),
    )


def _refusal(p: Path, why: str) -> StoreError:
    """The one-line error for a file that is not a valid store of ours."""
    return StoreError("store file", str(p), f"{why}; set {STORE_ENV} to another file or move this one aside")


def _text(value) -> str:
    """A name or value read as bytes, as text (bytes that are not UTF-8 replaced)."""
    return value.decode("utf-8", errors="replace") if isinstance(value, bytes) else str(value)


def _open_read_only(p: Path) -> sqlite3.Connection | None:
    """The file opened read-only, reading text as bytes; None when it is missing or empty."""
    try:
        if not p.exists() or p.stat().st_size == 0:
            return None
        from urllib.parse import quote

        con = sqlite3.connect(
            f"file:{quote(str(p.resolve()))}?mode=ro", uri=True, timeout=BUSY_TIMEOUT_MS / 1000, isolation_level=None
        )
    except (OSError, sqlite3.Error) as exc:
        said = os_refusal(p, exc)
        raise (said if said is not None else _refusal(p, f"cannot be opened ({exc})")) from None
    except ValueError as exc:
        raise _refusal(p, f"cannot be opened ({exc})") from None
    con.text_factory = bytes  # names and values that are not UTF-8 must not raise
    return con


def _schema_version(con: sqlite3.Connection, p: Path, columns: dict[str, set[str]]) -> int:
    """The schema version in the ``meta`` table (checked to have our layout), 1 or more."""
    if not {"key", "value"} <= columns.get("meta", set()):
        raise _refusal(p, "is not a Fresh Gas Ledger store (its meta table has another layout)")
    row = con.execute("SELECT value FROM meta WHERE key = 'schema_version'").fetchone()
    if row is None:
        raise _refusal(p, "is not a Fresh Gas Ledger store (no schema version)")
    try:
        version = int(_text(row[0]))
    except ValueError:
        raise _refusal(p, f"has an unreadable schema version {_text(row[0])[:20]!r}") from None
    if version < 1:
        raise _refusal(p, f"has an unreadable schema version {version}")
    return version


def _check_tables(p: Path, version: int, columns: dict[str, set[str]]) -> None:
    """Refuse a store that lacks a table or column its schema version has."""
    for table, needed in _REQUIRED.get(version, {}).items():
        missing = needed - columns.get(table, set())
        if missing:
            what = (
                f"table '{table}'"
                if table not in columns
                else f"column(s) {', '.join(sorted(missing))} of table '{table}'"
            )
            raise _refusal(p, f"is a damaged store (schema {version} without its {what})")
