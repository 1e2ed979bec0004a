"""The project's store: plans, scenarios and overrides in one SQLite file, every version kept.

Where: the file named by the environment variable ``GAS_LEDGER_STORE``; without it,
``~/.gas-ledger/store.sqlite3``. The file is created on first use.

What: named *items* of a few kinds (``plan``: a case plan as TOML in the plan file format;
``scenario``: a year scenario, text owned by the year model (scenario TOML); ``casemix``:
a case mix as CSV in the case-mix file format; ``overrides``: reference
overrides as JSON in the form of :meth:`model.reference.Reference.with_overrides`). Saving an
item adds a new version; earlier versions stay readable. Deleting an item only hides it
(``restore`` brings it back). Nothing is overwritten or removed.

How: write-ahead logging, one ``BEGIN IMMEDIATE`` transaction per save (so concurrent
writers from several sessions or processes queue instead of losing work), ``synchronous=FULL``
so a committed version survives a crash. A ``meta`` table holds the schema version: a file
from a newer version of the program is refused, an older one is copied aside and migrated.
"""

from __future__ import annotations

import json
import os
import sqlite3
from contextlib import contextmanager
from dataclasses import dataclass
from datetime import datetime, timezone
from pathlib import Path
from typing import Iterator

from model.errors import InputError
from model.io.plans import parse_plan_text, plan_to_toml
from model.plan import CasePlan


#: Environment variable naming the store file.
STORE_ENV = "GAS_LEDGER_STORE"
#: Schema version this program writes. 1: plans only (table ``plans``); 2: items and versions.
SCHEMA_VERSION = 2
#: Kinds of item the store keeps.
KINDS = ("plan", "scenario", "casemix", "overrides")
#: How long a writer waits for another writer's transaction. [ms]
BUSY_TIMEOUT_MS = 60_000
#: Largest body stored for one version. [characters] (plan files are at most 1 MB)
MAX_BODY_CHARS = 2_000_000

_SCHEMA_2 = """
CREATE TABLE IF NOT EXISTS meta (key TEXT PRIMARY KEY, value TEXT NOT NULL);
CREATE TABLE IF NOT EXISTS items (
    id INTEGER PRIMARY KEY,
    kind TEXT NOT NULL,
    name TEXT NOT NULL,
    created_at TEXT NOT NULL,
    hidden_at TEXT,
    UNIQUE (kind, name)
);
CREATE TABLE IF NOT EXISTS versions (
    id INTEGER PRIMARY KEY AUTOINCREMENT,
    item_id INTEGER NOT NULL REFERENCES items(id),
    version INTEGER NOT NULL,
    body TEXT NOT NULL,
    note TEXT NOT NULL DEFAULT '',
    saved_at TEXT NOT NULL,
    UNIQUE (item_id, version)
);
"""


class StoreError(InputError):
    """The store file cannot be used (unreadable, foreign, or from a newer program)."""


@dataclass(frozen=True)
class Version:
    """One saved version of an item."""

    kind: str
    name: str
    version: int
    body: str
    note: str
    saved_at: str


def default_path() -> Path:
    """The store file: ``$GAS_LEDGER_STORE`` or ``~/.gas-ledger/store.sqlite3``."""
    env = os.environ.get(STORE_ENV, "").strip()
    if env:
        return Path(env).expanduser()
    return Path.home() / ".gas-ledger" / "store.sqlite3"


def _now() -> str:
    return datetime.now(timezone.utc).isoformat(timespec="microseconds")


def _check_kind(kind: str) -> str:
    if kind not in KINDS:
        raise InputError("kind", kind, "allowed kinds are " + ", ".join(KINDS))
    return kind


def _check_name(name) -> str:
    if not isinstance(name, str) or not name.strip() or len(name) > 200:
        raise InputError("name", name, "expected a name of 1 to 200 characters")
    return name.strip()


class Store:
    """A versioned store in one SQLite file. Cheap to create; open one per session or thread.

    Parameters
    ----------
    path : str or Path, optional
        The store file; default :func:`default_path`.
    """

    def __init__(self, path: str | os.PathLike | None = None):
        self.path = Path(path) if path is not None else default_path()
        try:
            self.path.parent.mkdir(parents=True, exist_ok=True)
        except OSError as exc:
            raise StoreError("store file", str(self.path), f"its folder cannot be made ({exc.strerror})") from None
        self._wal = False
        self._open_and_migrate()

    # ---- connection and schema -------------------------------------------------------

    def _connect(self, setup: bool = True) -> sqlite3.Connection:
        try:
            con = sqlite3.connect(self.path, timeout=BUSY_TIMEOUT_MS / 1000, isolation_level=None)
        except (OSError, sqlite3.Error) as exc:
            raise StoreError("store file", str(self.path), f"cannot be opened ({exc})") from None
        try:
            con.execute(f"PRAGMA busy_timeout = {BUSY_TIMEOUT_MS}")
            if not setup:      # only look: a foreign file must stay byte for byte as it was
                return con
            if not self._wal:     # WAL is a property of the file: set it once per Store
                con.execute("PRAGMA journal_mode = WAL")
                self._wal = True
            con.execute("PRAGMA synchronous = FULL")
            con.execute("PRAGMA foreign_keys = ON")
        except sqlite3.DatabaseError as exc:
            con.close()
            raise StoreError("store file", str(self.path),
                             f"is not a Fresh Gas Ledger store ({exc}); set {STORE_ENV} to another "
                             "file or move this one aside") from None
        return con

    @contextmanager
    def _connection(self, setup: bool = True) -> Iterator[sqlite3.Connection]:
        con = self._connect(setup)
        try:
            yield con
        finally:
            con.close()

    @contextmanager
    def _write(self) -> Iterator[sqlite3.Connection]:
        """One write transaction (taken at once, so writers queue rather than deadlock)."""
        with self._connection() as con:
            con.execute("BEGIN IMMEDIATE")
            try:
                yield con
            except BaseException:
                con.execute("ROLLBACK")
                raise
            con.execute("COMMIT")

    def schema_version(self) -> int:
        with self._connection() as con:
            return _read_schema_version(con, self.path)

    def _open_and_migrate(self) -> None:
        found = check_store_file(self.path)  # read-only: a foreign file stays as it was
        if found > SCHEMA_VERSION:
            raise StoreError("store file", str(self.path),
                             f"was written by a newer Fresh Gas Ledger (schema {found}; this version "
                             f"reads up to {SCHEMA_VERSION}); update the program or set {STORE_ENV} "
                             "to another file")
        if found == SCHEMA_VERSION:
            return
        if found > 0:
            self._backup(f".schema{found}.bak")
        with self._write() as con:
            # Re-read inside the lock: another process may have migrated meanwhile.
            found = _read_schema_version(con, self.path)
            if found == SCHEMA_VERSION:
                return
            for statement in _SCHEMA_2.split(";"):
                if statement.strip():
                    con.execute(statement)
            if found == 1:
                _migrate_1_to_2(con)
            con.execute("INSERT OR REPLACE INTO meta (key, value) VALUES ('schema_version', ?)",
                        (str(SCHEMA_VERSION),))
            con.execute("INSERT OR IGNORE INTO meta (key, value) VALUES ('created_at', ?)", (_now(),))

    def _backup(self, suffix: str) -> Path:
        """Copy the store to a file beside it (kept; the way back from a migration).

        The copy is written under a temporary name and given its name only when complete,
        so a migration killed while copying never leaves an empty or partial backup under a
        backup's name; an existing backup is never replaced.
        """
        partial = self.path.with_name(f"{self.path.name}{suffix}.incomplete-{os.getpid()}")
        partial.unlink(missing_ok=True)
        n = 0
        try:
            with self._connection() as src:
                _copy_database(src, partial)
            while True:
                target = self.path.with_name(self.path.name + suffix + (f".{n}" if n else ""))
                try:
                    os.link(partial, target)  # fails if the name is taken: nothing replaced
                    return target
                except FileExistsError:
                    n += 1
                except OSError:  # no hard links on this file system
                    if not target.exists():
                        os.replace(partial, target)
                        return target
                    n += 1
        finally:
            partial.unlink(missing_ok=True)

    # ---- generic items ---------------------------------------------------------------

    def save(self, kind: str, name: str, body: str, note: str = "") -> int:
        """Save a new version of an item; return its version number (1, 2, ...).

        The item is created on first save; a hidden item is shown again. Earlier versions
        are kept.
        """
        _check_kind(kind)
        name = _check_name(name)
        if not isinstance(body, str):
            raise InputError("body", type(body).__name__, "expected text")
        if len(body) > MAX_BODY_CHARS:
            raise InputError("body", f"{len(body)} characters", f"at most {MAX_BODY_CHARS} characters")
        now = _now()
        with self._write() as con:
            row = con.execute("SELECT id FROM items WHERE kind = ? AND name = ?", (kind, name)).fetchone()
            if row is None:
                item_id = con.execute("INSERT INTO items (kind, name, created_at) VALUES (?, ?, ?)",
                                      (kind, name, now)).lastrowid
            else:
                item_id = row[0]
                con.execute("UPDATE items SET hidden_at = NULL WHERE id = ?", (item_id,))
            (last,) = con.execute("SELECT COALESCE(MAX(version), 0) FROM versions WHERE item_id = ?",
                                  (item_id,)).fetchone()
            version = last + 1
            con.execute("INSERT INTO versions (item_id, version, body, note, saved_at) VALUES (?, ?, ?, ?, ?)",
                        (item_id, version, body, str(note)[:500], now))
        return version

    def names(self, kind: str, include_hidden: bool = False) -> list[str]:
        """Names of the items of a kind, most recently saved first."""
        _check_kind(kind)
        hidden = "" if include_hidden else "AND i.hidden_at IS NULL"
        with self._connection() as con:
            rows = con.execute(
                f"SELECT i.name FROM items i JOIN versions v ON v.item_id = i.id "
                f"WHERE i.kind = ? {hidden} GROUP BY i.id ORDER BY MAX(v.id) DESC", (kind,)).fetchall()
        return [r[0] for r in rows]

    def get(self, kind: str, name: str, version: int | None = None) -> Version:
        """One version of an item (the latest by default). Raises InputError if absent."""
        _check_kind(kind)
        sql = ("SELECT v.version, v.body, v.note, v.saved_at FROM versions v JOIN items i ON v.item_id = i.id "
               "WHERE i.kind = ? AND i.name = ?")
        args: tuple = (kind, name)
        if version is None:
            sql += " ORDER BY v.version DESC LIMIT 1"
        else:
            sql += " AND v.version = ?"
            args += (int(version),)
        with self._connection() as con:
            row = con.execute(sql, args).fetchone()
        if row is None:
            what = f"{kind} '{name}'" + (f" version {version}" if version is not None else "")
            raise InputError(kind, name, f"no saved {what}")
        return Version(kind, name, row[0], row[1], row[2], row[3])

    def history(self, kind: str, name: str) -> list[Version]:
        """Every version of an item, newest first."""
        _check_kind(kind)
        with self._connection() as con:
            rows = con.execute(
                "SELECT v.version, v.body, v.note, v.saved_at FROM versions v JOIN items i ON v.item_id = i.id "
                "WHERE i.kind = ? AND i.name = ? ORDER BY v.version DESC", (kind, name)).fetchall()
        return [Version(kind, name, *r) for r in rows]

    def count_versions(self, kind: str | None = None) -> int:
        with self._connection() as con:
            if kind is None:
                return con.execute("SELECT COUNT(*) FROM versions").fetchone()[0]
            return con.execute("SELECT COUNT(*) FROM versions v JOIN items i ON v.item_id = i.id "
                               "WHERE i.kind = ?", (_check_kind(kind),)).fetchone()[0]

    def hide(self, kind: str, name: str) -> None:
        """Hide an item from lists; its versions stay and :meth:`restore` shows it again."""
        with self._write() as con:
            cur = con.execute("UPDATE items SET hidden_at = ? WHERE kind = ? AND name = ?",
                              (_now(), _check_kind(kind), name))
            if cur.rowcount == 0:
                raise InputError(kind, name, f"no saved {kind} of that name")

    def restore(self, kind: str, name: str) -> None:
        """Show a hidden item again."""
        with self._write() as con:
            cur = con.execute("UPDATE items SET hidden_at = NULL WHERE kind = ? AND name = ?",
                              (_check_kind(kind), name))
            if cur.rowcount == 0:
                raise InputError(kind, name, f"no saved {kind} of that name")

    def integrity(self) -> str:
        """SQLite's own integrity check ("ok" when the file is sound)."""
        with self._connection() as con:
            return con.execute("PRAGMA integrity_check").fetchone()[0]

    # ---- plans -----------------------------------------------------------------------

    def save_plan(self, plan: CasePlan, note: str = "") -> int:
        """Save a case plan (as plan-file TOML) under its name; return the version number."""
        return self.save("plan", plan.name, plan_to_toml(plan), note)

    def load_plan(self, name: str, version: int | None = None) -> CasePlan:
        v = self.get("plan", name, version)
        return parse_plan_text(v.body, f"stored plan '{name}' version {v.version}")

    def import_plan_text(self, text, source: str = "uploaded file", note: str = "") -> tuple[CasePlan, int]:
        """Check a plan file's text and save it; return the plan and its version.

        A corrupt or foreign file raises InputError before anything is written, so the
        store is unchanged.
        """
        if isinstance(text, bytes):
            try:
                text = text.decode("utf-8")
            except UnicodeDecodeError:
                raise InputError(source, "the file", "expected UTF-8 text (a TOML plan file)") from None
        if not isinstance(text, str):
            raise InputError(source, type(text).__name__, "expected the text of a TOML plan file")
        plan = parse_plan_text(text, source)
        return plan, self.save_plan(plan, note or f"imported from {source}")

    def export_plan_text(self, name: str, version: int | None = None) -> str:
        return plan_to_toml(self.load_plan(name, version))

    # ---- overrides -------------------------------------------------------------------

    def save_overrides(self, overrides: dict, name: str = "dashboard", note: str = "") -> int:
        """Save reference overrides (the ``with_overrides`` mapping) as a new version."""
        body = json.dumps(overrides, sort_keys=True, allow_nan=False)
        return self.save("overrides", name, body, note)

    def load_overrides(self, name: str = "dashboard", version: int | None = None) -> dict:
        """The saved overrides (latest by default), or an empty dict if none were saved."""
        try:
            body = self.get("overrides", name, version).body
        except InputError:
            if version is not None:
                raise
            return {}
        try:
            data = json.loads(body)
        except ValueError:
            raise StoreError("store file", str(self.path), f"overrides '{name}' are not valid JSON") from None
        return data if isinstance(data, dict) else {}


def _copy_database(src: sqlite3.Connection, target: Path) -> None:
    """Copy an open database to a new file, flushed to disk."""
    dst = sqlite3.connect(target)
    try:
        src.backup(dst)
    finally:
        dst.close()
    with open(target, "rb+") as fh:
        os.fsync(fh.fileno())


#: Tables and columns each schema version must have (a file lacking one is not ours).
_REQUIRED = {
    1: {"meta": {"key", "value"}, "plans": {"name", "version", "toml", "saved_at"}},
    2: {"meta": {"key", "value"}, "items": {"id", "kind", "name", "created_at", "hidden_at"},
        "versions": {"id", "item_id", "version", "body", "note", "saved_at"}},
}


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
        damaged (SQLite's ``quick_check`` of every page), names that are not UTF-8, a ``meta`` table of another layout, no schema
        version, or a table or column of its version missing. The file is opened
        read-only and left byte for byte as it was.
    """
    p = Path(path)

    def refuse(why: str) -> StoreError:
        return StoreError("store file", str(p), f"{why}; set {STORE_ENV} to another file or move this one aside")

    try:
        if not p.exists() or p.stat().st_size == 0:
            return 0
        from urllib.parse import quote

        con = sqlite3.connect(f"file:{quote(str(p.resolve()))}?mode=ro", uri=True,
                              timeout=BUSY_TIMEOUT_MS / 1000, isolation_level=None)
    except (OSError, ValueError, sqlite3.Error) as exc:
        raise refuse(f"cannot be opened ({exc})") from None
    con.text_factory = bytes  # names and values that are not UTF-8 must not raise

    def text(value) -> str:
        return value.decode("utf-8", errors="replace") if isinstance(value, bytes) else str(value)

    try:
        tables = {text(r[0]) for r in con.execute("SELECT name FROM sqlite_master WHERE type = 'table'")}
        if not tables:
            return 0
        if "meta" not in tables:
            raise refuse(f"is an SQLite file of another program (tables: {', '.join(sorted(tables)[:5])})")
        columns = {t: {text(r[1]) for r in con.execute(f'PRAGMA table_info("{t}")')}
                   for t in tables if t.isidentifier()}
        if not {"key", "value"} <= columns.get("meta", set()):
            raise refuse("is not a Fresh Gas Ledger store (its meta table has another layout)")
        row = con.execute("SELECT value FROM meta WHERE key = 'schema_version'").fetchone()
        if row is None:
            raise refuse("is not a Fresh Gas Ledger store (no schema version)")
        try:
            version = int(text(row[0]))
        except ValueError:
            raise refuse(f"has an unreadable schema version {text(row[0])[:20]!r}") from None
        if version < 1:
            raise refuse(f"has an unreadable schema version {version}")
        for table, needed in _REQUIRED.get(version, {}).items():
            missing = needed - columns.get(table, set())
            if missing:
                what = f"table '{table}'" if table not in columns else \
                    f"column(s) {', '.join(sorted(missing))} of table '{table}'"
                raise refuse(f"is a damaged store (schema {version} without its {what})")
        if version <= SCHEMA_VERSION:  # pages and indexes sound (reads every page once)
            found = text(con.execute("PRAGMA quick_check(1)").fetchone()[0])
            if found != "ok":
                raise refuse(f"is a damaged store ({found[:120]})")
        return version
    except sqlite3.Error as exc:
        raise refuse(f"is not a Fresh Gas Ledger store ({exc})") from None
    finally:
        con.close()


def _read_schema_version(con: sqlite3.Connection, path: Path) -> int:
    """0 for an empty file, else the stored schema version. Refuses foreign files."""
    try:
        tables = {r[0] for r in con.execute("SELECT name FROM sqlite_master WHERE type = 'table'")}
    except sqlite3.DatabaseError as exc:
        raise StoreError("store file", str(path),
                         f"is not a Fresh Gas Ledger store ({exc}); set {STORE_ENV} to another file "
                         "or move this one aside") from None
    if not tables:
        return 0
    if "meta" not in tables:
        raise StoreError("store file", str(path),
                         f"is an SQLite file of another program (tables: {', '.join(sorted(tables)[:5])}); "
                         f"set {STORE_ENV} to another file")
    row = con.execute("SELECT value FROM meta WHERE key = 'schema_version'").fetchone()
    try:
        return int(row[0]) if row else 0
    except ValueError:
        raise StoreError("store file", str(path), f"has an unreadable schema version {row[0]!r}") from None


def create_schema_1(path: str | os.PathLike) -> None:
    """Create an empty store in the first layout (schema 1: plans only).

    Kept so the migration from it stays tested; the program never writes it otherwise.
    """
    con = sqlite3.connect(path, isolation_level=None)
    try:
        con.execute("CREATE TABLE meta (key TEXT PRIMARY KEY, value TEXT NOT NULL)")
        con.execute("INSERT INTO meta VALUES ('schema_version', '1')")
        con.execute("CREATE TABLE plans (name TEXT NOT NULL, version INTEGER NOT NULL, toml TEXT NOT NULL, "
                    "saved_at TEXT NOT NULL, PRIMARY KEY (name, version))")
    finally:
        con.close()


def _migrate_1_to_2(con: sqlite3.Connection) -> None:
    rows = con.execute("SELECT name, version, toml, saved_at FROM plans ORDER BY name, version").fetchall()
    ids: dict[str, int] = {}
    for name, version, body, saved_at in rows:
        if name not in ids:
            ids[name] = con.execute("INSERT INTO items (kind, name, created_at) VALUES ('plan', ?, ?)",
                                    (name, saved_at)).lastrowid
        con.execute("INSERT INTO versions (item_id, version, body, note, saved_at) VALUES (?, ?, ?, ?, ?)",
                    (ids[name], version, body, "migrated from schema 1", saved_at))
    # The old table stays (renamed), so nothing is lost even without the backup file.
    con.execute("ALTER TABLE plans RENAME TO plans_schema1")


__all__ = ["KINDS", "SCHEMA_VERSION", "STORE_ENV", "Store", "StoreError", "Version", "default_path"]
