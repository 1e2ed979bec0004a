"""A store file that is not a valid one of ours is refused with one line and left untouched."""

from __future__ import annotations

import os
from pathlib import Path

import pytest


def _sqlite(path: Path, *statements, version: str | None = None) -> Path:
    import sqlite3

    con = sqlite3.connect(path)
    for sql in statements:
        con.execute(sql)
    con.commit()
    con.close()
    return path


def _foreign_meta(path):
    return _sqlite(path, "CREATE TABLE meta (k TEXT, v TEXT)", "INSERT INTO meta VALUES ('schema_version', '2')")


def _no_version(path):
    return _sqlite(
        path, "CREATE TABLE meta (key TEXT PRIMARY KEY, value TEXT)", "INSERT INTO meta VALUES ('owner', 'x')"
    )


def _v1_without_plans(path):
    return _sqlite(
        path,
        "CREATE TABLE meta (key TEXT PRIMARY KEY, value TEXT NOT NULL)",
        "INSERT INTO meta VALUES ('schema_version', '1')",
    )


def _v2_without_items(path):
    return _sqlite(
        path,
        "CREATE TABLE meta (key TEXT PRIMARY KEY, value TEXT NOT NULL)",
        "INSERT INTO meta VALUES ('schema_version', '2')",
        "CREATE TABLE versions (id INTEGER PRIMARY KEY, item_id INTEGER, version INTEGER, "
        "body TEXT, note TEXT, saved_at TEXT)",
    )


def _bad_utf8_in_master(path):
    from model.store import Store

    Store(path)  # a valid store, then one byte of a table name made invalid UTF-8
    data = bytearray(path.read_bytes())
    at = data.find(b"CREATE TABLE items")
    data[at + len("CREATE TABLE ")] = 0xFF
    path.write_bytes(bytes(data))
    for extra in ("-wal", "-shm"):
        path.with_name(path.name + extra).unlink(missing_ok=True)
    return path


def _truncated(path):
    from model.store import Store

    Store(path).save("scenario", "a", "b" * 50_000)
    data = path.read_bytes()
    path.write_bytes(data[: len(data) // 3])
    return path


@pytest.mark.parametrize(
    "build", [_foreign_meta, _no_version, _v1_without_plans, _v2_without_items, _bad_utf8_in_master, _truncated]
)
def test_store_that_is_not_ours_is_refused_with_one_line_and_left_untouched(tmp_path, build):
    import hashlib

    from model.store import Store, StoreError

    path = build(tmp_path / "store.sqlite3")
    before = hashlib.sha256(path.read_bytes()).hexdigest()
    files_before = sorted(p.name for p in tmp_path.iterdir())
    with pytest.raises(StoreError) as err:
        Store(path)
    assert "\n" not in str(err.value) and "store file" in str(err.value)
    assert hashlib.sha256(path.read_bytes()).hexdigest() == before
    # Nothing new beside it but SQLite's own shared-memory files of a WAL-mode file.
    new = {p.name for p in tmp_path.iterdir()} - set(files_before)
    assert new <= {"store.sqlite3-wal", "store.sqlite3-shm"}


def test_killed_migration_leaves_no_partial_backup_under_a_backup_name(tmp_path, monkeypatch):
    import sqlite3

    from model import store as store_module
    from model.store import schema, sqlite

    path = tmp_path / "store.sqlite3"
    schema.create_schema_1(path)

    def killed(src, target):
        Path(target).write_bytes(b"SQLite format 3\x00" + b"\x00" * 100)  # half written
        raise KeyboardInterrupt  # the process is stopped mid-copy

    monkeypatch.setattr(sqlite, "_copy_database", killed)
    with pytest.raises(KeyboardInterrupt):
        store_module.Store(path)
    import re

    named_as_backup = [p.name for p in tmp_path.iterdir() if re.search(r"\.bak(\.\d+)?$", p.name)]
    assert named_as_backup == []
    assert not list(tmp_path.glob("*incomplete*"))  # removed when the copy stopped
    monkeypatch.undo()
    s = store_module.Store(path)  # the next start migrates and keeps a complete backup
    assert s.schema_version() == store_module.SCHEMA_VERSION
    backups = list(tmp_path.glob("*.schema1.bak*"))
    assert [b.name for b in backups] == ["store.sqlite3.schema1.bak"]
    con = sqlite3.connect(backups[0])
    assert con.execute("SELECT value FROM meta WHERE key = 'schema_version'").fetchone() == ("1",)
    con.close()


# ---- what the operating system said: a valid store is never called foreign -----------------
# SQLite's result codes: SQLITE_READONLY "attempt to write a readonly database", SQLITE_FULL
# "database or disk is full" (sqlite.org/rescode.html).

NOT_FOREIGN = ("not a Fresh Gas Ledger store", "move this one aside", "damaged", "another program")


def _assert_said(message: str, *words: str) -> None:
    assert "\n" not in message and "Traceback" not in message
    for word in words:
        assert word in message, message
    for word in NOT_FOREIGN:
        assert word not in message, message


def _connect_with(monkeypatch, path: Path, adjust) -> None:
    """Every connection to ``path`` made through ``adjust(real_connect, ...)``."""
    import sqlite3

    real = sqlite3.connect

    def connect(database, *args, **kwargs):
        if str(database) == str(path):
            return adjust(real, database, *args, **kwargs)
        return real(database, *args, **kwargs)

    monkeypatch.setattr(sqlite3, "connect", connect)


def test_a_save_on_a_full_disk_says_the_disk_is_full_and_keeps_every_version(tmp_path, monkeypatch):
    from model.store import Store, StoreError

    path = tmp_path / "store.sqlite3"
    Store(path).save("scenario", "kept", "body 1")

    def full(real, database, *args, **kwargs):
        con = real(database, *args, **kwargs)
        (pages,) = con.execute("PRAGMA page_count").fetchone()
        con.execute(f"PRAGMA max_page_count = {pages}")  # SQLite answers SQLITE_FULL beyond this
        return con

    _connect_with(monkeypatch, path, full)
    store = Store(path)
    with pytest.raises(StoreError) as err:
        store.save("scenario", "big", "x" * 200_000)
    _assert_said(str(err.value), "disk is full", "nothing was changed")
    monkeypatch.undo()
    assert Store(path).get("scenario", "kept").body == "body 1"


def test_a_save_to_a_read_only_store_says_read_only(tmp_path, monkeypatch):
    from model.store import Store, StoreError

    path = tmp_path / "store.sqlite3"
    Store(path).save("scenario", "kept", "body 1")

    def read_only(real, database, *args, **kwargs):
        kwargs.pop("uri", None)
        return real(f"file:{database}?mode=ro", *args, uri=True, **kwargs)

    _connect_with(monkeypatch, path, read_only)
    with pytest.raises(StoreError) as err:
        Store(path).save("scenario", "kept", "body 2")
    _assert_said(str(err.value), "read-only", "nothing was changed")


@pytest.mark.skipif(
    not hasattr(os, "geteuid") or os.geteuid() == 0, reason="needs POSIX permissions that bind (root ignores them)"
)
def test_store_info_in_a_read_only_folder_says_read_only_not_foreign(tmp_path, capsys):
    # A real read-only folder: SQLite cannot make the store's -wal and -shm files beside it.
    from model.cli import main
    from model.store import Store

    folder = tmp_path / "shelf"
    folder.mkdir()
    path = folder / "store.sqlite3"
    Store(path).save("scenario", "kept", "body 1")
    folder.chmod(0o555)
    try:
        status = main(["store", "info", str(path)])
    finally:
        folder.chmod(0o755)
    err = capsys.readouterr().err
    assert status == 2, err
    _assert_said(err.strip(), "read-only", "nothing was changed")


def test_store_info_on_a_store_it_may_not_write_says_read_only_not_foreign(tmp_path, monkeypatch, capsys):
    # The same refusal on any account, root included: the store in rollback-journal mode,
    # opened read-only, so SQLite itself answers SQLITE_READONLY when the store asks for WAL.
    import sqlite3

    from model.cli import main
    from model.store import Store

    path = tmp_path / "store.sqlite3"
    Store(path).save("scenario", "kept", "body 1")
    con = sqlite3.connect(path)
    con.execute("PRAGMA journal_mode = DELETE")
    con.close()

    def read_only(real, database, *args, **kwargs):
        kwargs.pop("uri", None)
        return real(f"file:{database}?mode=ro", *args, uri=True, **kwargs)

    _connect_with(monkeypatch, path, read_only)
    status = main(["store", "info", str(path)])
    err = capsys.readouterr().err
    assert status == 2, err
    _assert_said(err.strip(), "read-only", "nothing was changed")
