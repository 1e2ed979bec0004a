"""Fuzzed store files (hypothesis): a damaged or foreign store is refused with one line and left untouched, or works."""

from __future__ import annotations

import sqlite3
import tempfile
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from tests.helpers.fuzz import SLOW, store_refused_untouched_or_works


@pytest.fixture(scope="module")
def good_store(scratch):
    from model.store import Store

    path = scratch / "good_store.sqlite3"
    s = Store(path)
    for i in range(30):
        s.save("scenario", f"s{i % 7}", "x" * (100 * i), note=f"n{i}")
    con = sqlite3.connect(path)
    con.execute("PRAGMA wal_checkpoint(TRUNCATE)")
    con.close()
    return path.read_bytes()


@settings(SLOW, max_examples=100)
@given(
    how=st.sampled_from(["junk", "truncate", "zero_page"]),
    where=st.floats(0, 1),
    junk=st.binary(min_size=1, max_size=200),
)
def test_damaged_store_is_refused_untouched_or_works(how, where, junk, good_store, scratch):
    folder = Path(tempfile.mkdtemp(dir=scratch))
    path = folder / "store.sqlite3"
    pos = int(where * (len(good_store) - 1))
    if how == "junk":
        data = good_store[:pos] + junk + good_store[pos + len(junk) :]
    elif how == "truncate":
        data = good_store[:pos]
    else:
        page = 4096
        start = pos // page * page
        data = good_store[:start] + b"\x00" * page + good_store[start + page :]
    path.write_bytes(data)
    store_refused_untouched_or_works(path)


@settings(SLOW, max_examples=100)
@given(
    tables=st.lists(
        st.tuples(
            st.sampled_from(["meta", "items", "versions", "plans", "x", "Meta", "items2"]),
            st.lists(
                st.sampled_from(
                    [
                        "key",
                        "value",
                        "k",
                        "v",
                        "id",
                        "kind",
                        "name",
                        "created_at",
                        "hidden_at",
                        "item_id",
                        "version",
                        "body",
                        "note",
                        "saved_at",
                        "toml",
                    ]
                ),
                min_size=1,
                max_size=6,
                unique=True,
            ),
        ),
        max_size=4,
        unique_by=lambda t: t[0].lower(),
    ),
    version=st.sampled_from(["1", "2", "3", "0", "-1", "x", "", "2.0", None]),
)
def test_foreign_store_layouts_are_refused_untouched_or_work(tables, version, scratch):
    folder = Path(tempfile.mkdtemp(dir=scratch))
    path = folder / "store.sqlite3"
    con = sqlite3.connect(path)
    for name, columns in tables:
        con.execute(f'CREATE TABLE "{name}" ({", ".join(columns)})')
        if name == "meta" and version is not None and {"key", "value"} <= set(columns):
            con.execute("INSERT INTO meta (key, value) VALUES ('schema_version', ?)", (version,))
    con.commit()
    con.close()
    store_refused_untouched_or_works(path)
