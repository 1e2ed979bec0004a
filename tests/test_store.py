"""The SQLite store: versions kept, concurrent writers, killed writers, schema versions, imports."""

from __future__ import annotations

import os
import signal
import sqlite3
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

from model import load_plan
from model.errors import InputError
from model.io.plans import plan_to_toml
from model.store import SCHEMA_VERSION, STORE_ENV, Store, StoreError, create_schema_1, default_path

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "demo_data" / "plans"
PY = sys.executable


@pytest.fixture
def store(tmp_path):
    return Store(tmp_path / "store.sqlite3")


@pytest.fixture
def plan():
    return load_plan(DEMO / "lap_chole_low_flow.toml")


def test_path_comes_from_environment(monkeypatch, tmp_path):
    monkeypatch.setenv(STORE_ENV, str(tmp_path / "x" / "s.sqlite3"))
    assert default_path() == tmp_path / "x" / "s.sqlite3"
    s = Store()
    assert s.path.exists() and s.schema_version() == SCHEMA_VERSION


def test_saving_keeps_every_earlier_version(store, plan):
    v1 = store.save_plan(plan)
    changed = plan.with_phase(1, o2_l_min=1.5)
    v2 = store.save_plan(changed)
    assert (v1, v2) == (1, 2)
    assert store.load_plan(plan.name, 1) == plan
    assert store.load_plan(plan.name) == changed
    assert [v.version for v in store.history("plan", plan.name)] == [2, 1]


def test_hidden_item_can_be_restored(store, plan):
    store.save_plan(plan)
    store.hide("plan", plan.name)
    assert plan.name not in store.names("plan")
    assert store.load_plan(plan.name) == plan       # versions stay readable
    store.restore("plan", plan.name)
    assert plan.name in store.names("plan")


def test_saved_plan_survives_a_restart(tmp_path, plan):
    path = tmp_path / "store.sqlite3"
    Store(path).save_plan(plan)
    # A separate process (as after an app restart) reads it back from the file alone.
    code = (f"from model.store import Store; s = Store({str(path)!r}); "
            f"print(s.load_plan({plan.name!r}).phases[1].o2_l_min)")
    out = subprocess.run([PY, "-c", code], capture_output=True, text=True, cwd=ROOT, timeout=60)
    assert out.returncode == 0, out.stderr
    assert float(out.stdout) == plan.phases[1].o2_l_min


@pytest.mark.parametrize("payload", [
    b"\x00\x01\x02binary junk\xff\xfe",
    b"PK\x03\x04 an archive",
    b"[project]\nname = 'something else'\n",          # TOML, but a foreign file
    b"<html><body>not a plan</body></html>",
    b"name = 'x'\nagent = 'sevoflurane'\n[[phases]]\nduration = '-5 min'\no2 = 1\ndial = 2\n",
])
def test_corrupt_or_foreign_import_is_refused_and_store_unchanged(store, plan, payload):
    store.save_plan(plan)
    before = store.count_versions()
    with pytest.raises(InputError) as err:
        store.import_plan_text(payload, "upload.toml")
    assert "upload.toml" in str(err.value)
    assert store.count_versions() == before
    assert store.names("plan") == [plan.name]


def test_valid_import_is_saved(store, plan):
    imported, version = store.import_plan_text(plan_to_toml(plan).encode(), "plan.toml")
    assert version == 1 and imported == plan
    assert store.export_plan_text(plan.name) == plan_to_toml(plan)


def test_overrides_round_trip_and_keep_versions(store):
    assert store.load_overrides() == {}
    store.save_overrides({"prices": {"currency": "EUR"}})
    store.save_overrides({})
    assert store.load_overrides() == {}
    assert store.load_overrides(version=1) == {"prices": {"currency": "EUR"}}


_WRITER = textwrap.dedent("""
    import sys
    from model.store import Store
    path, writer, n = sys.argv[1], int(sys.argv[2]), int(sys.argv[3])
    s = Store(path)
    for i in range(n):
        s.save("scenario", "shared scenario", f"{writer}:{i}")
""")


def test_eight_writers_500_versions_each_lose_none(tmp_path):
    path = tmp_path / "store.sqlite3"
    Store(path)
    writers, per_writer = 8, 500
    procs = [subprocess.Popen([PY, "-c", _WRITER, str(path), str(w), str(per_writer)], cwd=ROOT,
                              stderr=subprocess.PIPE) for w in range(writers)]
    for p in procs:
        _, err = p.communicate(timeout=600)
        assert p.returncode == 0, err.decode()
    history = Store(path).history("scenario", "shared scenario")
    assert len(history) == writers * per_writer
    assert sorted(v.version for v in history) == list(range(1, writers * per_writer + 1))
    assert {v.body for v in history} == {f"{w}:{i}" for w in range(writers) for i in range(per_writer)}


_SLOW_WRITER = textwrap.dedent("""
    import sys
    from model.store import Store
    s = Store(sys.argv[1])
    body = "x" * 400_000
    i = 0
    while True:
        v = s.save("scenario", "big", f"{i}:" + body)
        print(v, flush=True)
        i += 1
""")


def test_writer_killed_mid_save_leaves_every_committed_version(tmp_path):
    path = tmp_path / "store.sqlite3"
    Store(path)
    proc = subprocess.Popen([PY, "-c", _SLOW_WRITER, str(path)], cwd=ROOT, stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True)
    committed = []
    try:
        while len(committed) < 25:
            line = proc.stdout.readline()
            assert line, proc.stderr.read()
            committed.append(int(line))
    finally:
        os.kill(proc.pid, signal.SIGKILL)     # most likely inside the next save
        proc.wait(timeout=30)
    committed += [int(x) for x in proc.stdout.read().split()]
    s = Store(path)
    assert s.integrity() == "ok"
    versions = {v.version for v in s.history("scenario", "big")}
    assert set(committed) <= versions
    assert versions == set(range(1, max(versions) + 1))
    assert s.save("scenario", "big", "after the crash") == max(versions) + 1


def test_store_from_a_newer_program_is_refused(tmp_path):
    path = tmp_path / "store.sqlite3"
    Store(path)
    con = sqlite3.connect(path)
    con.execute("UPDATE meta SET value = ? WHERE key = 'schema_version'", (str(SCHEMA_VERSION + 5),))
    con.commit()
    con.close()
    with pytest.raises(StoreError, match="newer Fresh Gas Ledger"):
        Store(path)


def test_older_store_is_migrated_with_a_backup(tmp_path, plan):
    path = tmp_path / "store.sqlite3"
    create_schema_1(path)
    con = sqlite3.connect(path)
    con.execute("INSERT INTO plans VALUES (?, 1, ?, '2025-01-01T00:00:00')", (plan.name, plan_to_toml(plan)))
    changed = plan.with_phase(1, o2_l_min=2.0)
    con.execute("INSERT INTO plans VALUES (?, 2, ?, '2025-01-02T00:00:00')", (plan.name, plan_to_toml(changed)))
    con.commit()
    con.close()
    s = Store(path)
    assert s.schema_version() == SCHEMA_VERSION
    assert s.load_plan(plan.name, 1) == plan and s.load_plan(plan.name) == changed
    backup = path.with_name(path.name + ".schema1.bak")
    assert backup.exists()
    con = sqlite3.connect(backup)
    assert con.execute("SELECT COUNT(*) FROM plans").fetchone()[0] == 2
    con.close()
    assert s.save_plan(plan) == 3


@pytest.mark.parametrize("content", [b"this is not a database at all" * 100, None])
def test_foreign_store_file_is_refused(tmp_path, content):
    path = tmp_path / "store.sqlite3"
    if content is None:
        con = sqlite3.connect(path)
        con.execute("CREATE TABLE invoices (id INTEGER)")
        con.commit()
        con.close()
    else:
        path.write_bytes(content)
    before = path.read_bytes()
    with pytest.raises(StoreError, match="store file"):
        Store(path)
    assert path.read_bytes() == before
