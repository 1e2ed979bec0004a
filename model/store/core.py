"""The project's store: plans, scenarios and overrides, every version kept, in SQLite or PostgreSQL.

Where: ``GAS_LEDGER_STORE`` names either a file (SQLite, the embedded default) or a
PostgreSQL connection URL (``postgresql://user@host:5432/dbname``, the shared store of a
department or a health system). Without it the store is ``~/.gas-ledger/store.sqlite3``.
A file is created on first use; a PostgreSQL database must exist (the store makes its tables).

What: named *items* of a few kinds (``plan``: a case plan as TOML in the plan file format;
``scenario``: a year scenario, text owned by the year model (scenario TOML); ``casemix``:
a case mix as CSV in the case-mix file format; ``overrides``: reference
overrides as JSON in the form of :meth:`model.reference.Reference.with_overrides`). Saving an
item adds a new version with its author and time; earlier versions stay readable. Deleting an
item only hides it (``restore`` brings it back). Nothing is overwritten or removed.

How: one schema for both databases (tables ``meta``, ``items``, ``versions``), its version in
``meta``. Each save is one transaction that holds the item's lock while it numbers the new
version, so concurrent writers from several sessions or processes queue instead of losing
work, and a writer killed mid-save loses only that uncommitted save. SQLite: write-ahead
logging, ``BEGIN IMMEDIATE``, ``synchronous=FULL``. PostgreSQL: psycopg 3 with a connection
pool, ``SELECT ... FOR UPDATE`` on the item. A store from a newer version of the program is
refused; an older one is migrated in one transaction (an SQLite file is first copied aside).
"""

from __future__ import annotations

import json
import os
from pathlib import Path

from model.base.errors import InputError
from model.io.plans import parse_plan_text, plan_to_toml
from model.plan import CasePlan
from model.store.postgres import _Postgres
from model.store.schema import (
    _MIGRATIONS,
    MAX_BODY_CHARS,
    SCHEMA_VERSION,
    STORE_ENV,
    StoreError,
    Version,
    _check_kind,
    _check_name,
    _check_text,
    _clean_author,
    _now,
    _schema,
    default_location,
    is_postgres_url,
)
from model.store.sqlite import _SQLite, check_store_file


class Store:
    """A versioned store in an SQLite file or a PostgreSQL database.

    Cheap to create for SQLite (open one per session or thread); a PostgreSQL store keeps a
    small connection pool, so share one per process and :meth:`close` it when done.

    Parameters
    ----------
    location : str or Path, optional
        A file path (SQLite) or a ``postgresql://`` URL; default :func:`default_location`.
    """

    def __init__(self, location: str | os.PathLike | None = None):
        if location is None:
            location = default_location()
        self._db: _Postgres | _SQLite
        if is_postgres_url(location):
            self._db = _Postgres(str(location).strip())
        else:
            self._db = _SQLite(Path(location).expanduser())
        try:
            self._open_and_migrate()
        except BaseException:
            self._db.close()  # a refused store keeps no connections open
            raise

    @property
    def path(self) -> Path | None:
        """The SQLite file (None for PostgreSQL)."""
        return self._db.path

    @property
    def location(self) -> str:
        """Where the store is, for messages: the file, or the URL without its password."""
        return self._db.where

    @property
    def dialect(self) -> str:
        """Dialect of the database: "sqlite" or "postgresql"."""
        return self._db.dialect

    def close(self) -> None:
        """Close the PostgreSQL pool (nothing to do for SQLite)."""
        self._db.close()

    def __enter__(self) -> Store:
        return self

    def __exit__(self, *exc) -> None:
        self.close()

    # ---- schema ----------------------------------------------------------------------

    def schema_version(self) -> int:
        """The store's schema version (0 for an empty store)."""
        with self._db.read() as con:
            return self._read_schema_version(con)

    def _read_schema_version(self, con) -> int:
        """0 for an empty store, else the stored schema version. Refuses foreign stores."""
        tables = self._db.tables(con)
        if not tables:
            return 0
        what = "store file" if self.dialect == "sqlite" else "store"
        if "meta" not in tables:
            kind = "an SQLite file" if self.dialect == "sqlite" else "a database"
            raise StoreError(
                what,
                self.location,
                f"is {kind} of another program (tables: {', '.join(sorted(tables)[:5])}); "
                f"set {STORE_ENV} to another " + ("file" if self.dialect == "sqlite" else "database"),
            )
        row = con.execute("SELECT value FROM meta WHERE key = 'schema_version'").fetchone()
        try:
            return int(row[0]) if row else 0
        except ValueError:
            raise StoreError(what, self.location, f"has an unreadable schema version {row[0]!r}") from None

    def _open_and_migrate(self) -> None:
        if isinstance(self._db, _SQLite):
            check_store_file(self._db.path)  # read-only: a file that is not ours stays as it was
        with self._db.read(setup=False) as con:
            found = self._read_schema_version(con)
        self._refuse_newer(found)
        if found == SCHEMA_VERSION:
            return
        with self._db.write() as con:
            self._db.lock_store(con)
            # Re-read inside the lock: another process may have migrated meanwhile.
            found = self._read_schema_version(con)
            self._refuse_newer(found)
            if found == SCHEMA_VERSION:
                return
            if found == 0:
                for statement in _schema(self.dialect):
                    con.execute(statement)
            else:
                self._db.backup(con, found)
                for step in range(found, SCHEMA_VERSION):
                    _MIGRATIONS[step](con, self.dialect)
            con.execute(
                "INSERT INTO meta (key, value) VALUES ('schema_version', ?) "
                "ON CONFLICT (key) DO UPDATE SET value = excluded.value",
                (str(SCHEMA_VERSION),),
            )
            con.execute(
                "INSERT INTO meta (key, value) VALUES ('created_at', ?) ON CONFLICT (key) DO NOTHING", (_now(),)
            )

    def _refuse_newer(self, found: int) -> None:
        if found > SCHEMA_VERSION:
            what = "store file" if self.dialect == "sqlite" else "store"
            raise StoreError(
                what,
                self.location,
                f"was written by a newer Fresh Gas Ledger (schema {found}; this version "
                f"reads up to {SCHEMA_VERSION}); update the program or set {STORE_ENV} "
                "to another " + ("file" if self.dialect == "sqlite" else "database"),
            )

    # ---- generic items ---------------------------------------------------------------

    def save(self, kind: str, name: str, body: str, note: str = "", author: str = "") -> int:
        """Save a new version of an item; return its version number (1, 2, ...).

        The item is created on first save; a hidden item is shown again. Earlier versions
        are kept. ``author`` names who saved it ("" when no one is signed in).
        """
        _check_kind(kind)
        name = _check_name(name)
        _check_text("body", body, MAX_BODY_CHARS)
        note = str(note).replace("\x00", "")[:500]
        author = _clean_author(author)
        now = _now()
        with self._db.write() as con:
            item_id = self._lock_item(con, kind, name, now)
            con.execute("UPDATE items SET hidden_at = NULL WHERE id = ?", (item_id,))
            (last,) = con.execute(
                "SELECT COALESCE(MAX(version), 0) FROM versions WHERE item_id = ?", (item_id,)
            ).fetchone()
            version = last + 1
            con.execute(
                "INSERT INTO versions (item_id, version, body, note, saved_at, author) VALUES (?, ?, ?, ?, ?, ?)",
                (item_id, version, body, note, now, author),
            )
        return version

    def _lock_item(self, con, kind: str, name: str, created_at: str, hidden_at: str | None = None) -> int:
        """The item's id, created if new, locked until the transaction ends."""
        find = "SELECT id FROM items WHERE kind = ? AND name = ?" + self._db.for_update
        row = con.execute(find, (kind, name)).fetchone()
        if row is None:
            # Two first saves at once: the second waits for the first, then finds its row.
            con.execute(
                "INSERT INTO items (kind, name, created_at, hidden_at) VALUES (?, ?, ?, ?) "
                "ON CONFLICT (kind, name) DO NOTHING",
                (kind, name, created_at, hidden_at),
            )
            row = con.execute(find, (kind, name)).fetchone()
        return row[0]

    def names(self, kind: str, include_hidden: bool = False) -> list[str]:
        """Names of the items of a kind, most recently saved first."""
        _check_kind(kind)
        hidden = "" if include_hidden else "AND i.hidden_at IS NULL"
        with self._db.read() as con:
            rows = con.execute(
                f"SELECT i.name FROM items i JOIN versions v ON v.item_id = i.id "
                f"WHERE i.kind = ? {hidden} GROUP BY i.id, i.name ORDER BY MAX(v.id) DESC",
                (kind,),
            ).fetchall()
        return [r[0] for r in rows]

    _COLUMNS = "v.version, v.body, v.note, v.saved_at, v.author"

    def get(self, kind: str, name: str, version: int | None = None) -> Version:
        """One version of an item (the latest by default). Raises InputError if absent."""
        _check_kind(kind)
        sql = f"SELECT {self._COLUMNS} FROM versions v JOIN items i ON v.item_id = i.id WHERE i.kind = ? AND i.name = ?"
        args: tuple = (kind, name)
        if version is None:
            sql += " ORDER BY v.version DESC LIMIT 1"
        else:
            sql += " AND v.version = ?"
            args += (int(version),)
        with self._db.read() as con:
            row = con.execute(sql, args).fetchone()
        if row is None:
            what = f"{kind} '{name}'" + (f" version {version}" if version is not None else "")
            raise InputError(kind, name, f"no saved {what}")
        return Version(kind, name, *row)

    def history(self, kind: str, name: str) -> list[Version]:
        """Every version of an item, newest first."""
        _check_kind(kind)
        with self._db.read() as con:
            rows = con.execute(
                f"SELECT {self._COLUMNS} FROM versions v JOIN items i ON v.item_id = i.id "
                "WHERE i.kind = ? AND i.name = ? ORDER BY v.version DESC",
                (kind, name),
            ).fetchall()
        return [Version(kind, name, *r) for r in rows]

    def count_versions(self, kind: str | None = None) -> int:
        """Number of saved versions of ``kind`` (of every kind when None)."""
        with self._db.read() as con:
            if kind is None:
                return con.execute("SELECT COUNT(*) FROM versions").fetchone()[0]
            return con.execute(
                "SELECT COUNT(*) FROM versions v JOIN items i ON v.item_id = i.id WHERE i.kind = ?",
                (_check_kind(kind),),
            ).fetchone()[0]

    def hide(self, kind: str, name: str) -> None:
        """Hide an item from lists; its versions stay and :meth:`restore` shows it again."""
        with self._db.write() as con:
            cur = con.execute(
                "UPDATE items SET hidden_at = ? WHERE kind = ? AND name = ?", (_now(), _check_kind(kind), name)
            )
            if cur.rowcount == 0:
                raise InputError(kind, name, f"no saved {kind} of that name")

    def restore(self, kind: str, name: str) -> None:
        """Show a hidden item again."""
        with self._db.write() as con:
            cur = con.execute(
                "UPDATE items SET hidden_at = NULL WHERE kind = ? AND name = ?", (_check_kind(kind), name)
            )
            if cur.rowcount == 0:
                raise InputError(kind, name, f"no saved {kind} of that name")

    def integrity(self) -> str:
        """Whether the store is sound: "ok", or what is wrong.

        Sound is the database's own check (SQLite) passing, and every item's versions
        numbered 1 to n without a gap.
        """
        with self._db.read() as con:
            own = self._db.integrity(con)
            if own != "ok":
                return own
            gaps = con.execute(
                "SELECT i.kind, i.name FROM items i JOIN versions v ON v.item_id = i.id "
                "GROUP BY i.id, i.kind, i.name HAVING COUNT(*) <> MAX(v.version) "
                "OR MIN(v.version) <> 1"
            ).fetchall()
        if gaps:
            return "versions missing in " + ", ".join(f"{k} '{n}'" for k, n in gaps[:5])
        return "ok"

    # ---- plans -----------------------------------------------------------------------

    def save_plan(self, plan: CasePlan, note: str = "", author: str = "") -> int:
        """Save a case plan (as plan-file TOML) under its name; return the version number."""
        return self.save("plan", plan.name, plan_to_toml(plan), note, author)

    def load_plan(self, name: str, version: int | None = None) -> CasePlan:
        """The saved plan ``name`` at ``version`` (the latest when None), parsed."""
        v = self.get("plan", name, version)
        return parse_plan_text(v.body, f"stored plan '{name}' version {v.version}")

    def import_plan_text(
        self, text, source: str = "uploaded file", note: str = "", author: str = ""
    ) -> tuple[CasePlan, int]:
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
        return plan, self.save_plan(plan, note or f"imported from {source}", author)

    def export_plan_text(self, name: str, version: int | None = None) -> str:
        """The saved plan ``name`` at ``version`` (the latest when None) as plan-file TOML."""
        return plan_to_toml(self.load_plan(name, version))

    # ---- overrides -------------------------------------------------------------------

    def save_overrides(self, overrides: dict, name: str = "dashboard", note: str = "", author: str = "") -> int:
        """Save reference overrides (the ``with_overrides`` mapping) as a new version."""
        body = json.dumps(overrides, sort_keys=True, allow_nan=False)
        return self.save("overrides", name, body, note, author)

    def load_overrides(self, name: str = "dashboard", version: int | None = None) -> dict:
        """The saved overrides (latest by default), or an empty dict if none were saved."""
        try:
            body = self.get("overrides", name, version).body
        except StoreError:
            raise
        except InputError:
            if version is not None:
                raise
            return {}
        try:
            data = json.loads(body)
        except ValueError:
            raise StoreError("store", self.location, f"overrides '{name}' are not valid JSON") from None
        return data if isinstance(data, dict) else {}

    # ---- copying ---------------------------------------------------------------------

    def copy_into(self, target: Store) -> int:
        """Copy every item and version of this store into an empty ``target``.

        Returns the number of versions copied.

        Each version keeps its number, body, note, time and author; each item its creation
        time and whether it is hidden; the order of saves is kept. The copy is one
        transaction of the target: it is whole or not at all. A target that already holds
        versions is refused, so nothing there is mixed or overwritten.
        """
        with self._db.read() as con:
            # Versions first: items are never removed, so each one read has its item below.
            versions = con.execute(
                "SELECT item_id, version, body, note, saved_at, author FROM versions ORDER BY id"
            ).fetchall()
            items = con.execute("SELECT id, kind, name, created_at, hidden_at FROM items ORDER BY id").fetchall()
        used = {v[0] for v in versions}
        items = [i for i in items if i[0] in used]
        with target._db.write() as con:
            target._db.lock_store(con)
            (held,) = con.execute("SELECT COUNT(*) FROM versions").fetchone()
            if held:
                raise InputError(
                    "target store", target.location, f"already holds {held} saved versions; copy into an empty store"
                )
            ids = {}
            for old_id, kind, name, created_at, hidden_at in items:
                ids[old_id] = target._lock_item(con, kind, name, created_at, hidden_at)
            for item_id, version, body, note, saved_at, author in versions:
                con.execute(
                    "INSERT INTO versions (item_id, version, body, note, saved_at, author) VALUES (?, ?, ?, ?, ?, ?)",
                    (ids[item_id], version, body, note, saved_at, author),
                )
        return len(versions)
