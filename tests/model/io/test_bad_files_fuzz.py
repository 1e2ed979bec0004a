"""Fuzzing the file-level classes of bad input (issue 15): nothing but a result or one message.

Classes: Parquet columns of list, struct, map and other types; damaged Parquet pages behind
an intact footer; deep TOML, judged alike by the upload guard and the file readers; long
and impossible file names; foreign and damaged SQLite stores (refused and left as they
were, or working). The line-level classes are in ``test_fuzz_bad_input.py``.
"""

from __future__ import annotations

import csv
import io
import sqlite3
import tempfile
from pathlib import Path

import numpy as np
import pytest
from fuzzing import FUZZ, SLOW, scratch, store_refused_untouched_or_works  # noqa: F401  (scratch: fixture)
from hypothesis import given, settings
from hypothesis import strategies as st

from model.audit.engine import audit_records
from model.base.errors import InputError
from model.io import purchases

ROOT = Path(__file__).resolve().parents[1]


# --- Parquet column types and damaged pages ---------------------------------------------


def _arrow_column(kind: str, n: int):
    import pyarrow as pa

    vals = [float(i % 5) for i in range(n)]
    return {
        "list<double>": lambda: pa.array([[v] for v in vals], type=pa.list_(pa.float64())),
        "large_list<double>": lambda: pa.array([[v] for v in vals], type=pa.large_list(pa.float64())),
        "fixed_size_list": lambda: pa.array([[v, v] for v in vals], type=pa.list_(pa.float64(), 2)),
        "list<list<double>>": lambda: pa.array([[[v]] for v in vals], type=pa.list_(pa.list_(pa.float64()))),
        "struct": lambda: pa.array([{"a": v, "b": str(v)} for v in vals]),
        "map": lambda: pa.array([[("k", v)] for v in vals], type=pa.map_(pa.string(), pa.float64())),
        "dictionary": lambda: pa.array([str(v) for v in vals]).dictionary_encode(),
        "binary": lambda: pa.array([str(v).encode() for v in vals], type=pa.binary()),
        "bool": lambda: pa.array([v > 1 for v in vals]),
        "int8": lambda: pa.array([int(v) for v in vals], type=pa.int8()),
        "uint64": lambda: pa.array([int(v) for v in vals], type=pa.uint64()),
        "decimal": lambda: pa.array([int(v) for v in vals], type=pa.decimal128(10, 2)),
        "float32": lambda: pa.array(vals, type=pa.float32()),
        "time": lambda: pa.array([int(v) for v in vals], type=pa.time32("s")),
        "duration": lambda: pa.array([int(v * 60) for v in vals], type=pa.duration("s")),
        "timestamp": lambda: pa.array((np.arange(n) * 60).astype("datetime64[s]")),
        "date": lambda: pa.array(np.arange(n).astype("datetime64[D]")),
        "null": lambda: pa.nulls(n),
        "string": lambda: pa.array([f"{v:g}" for v in vals]),
    }[kind]()


PARQUET_KINDS = [
    "list<double>",
    "large_list<double>",
    "fixed_size_list",
    "list<list<double>>",
    "struct",
    "map",
    "dictionary",
    "binary",
    "bool",
    "int8",
    "uint64",
    "decimal",
    "float32",
    "time",
    "duration",
    "timestamp",
    "date",
    "null",
    "string",
]


@settings(SLOW, max_examples=60)
@given(
    column=st.sampled_from(["case_id", "elapsed", "time", "agent", "o2", "air", "dial", "end_tidal"]),
    kind=st.sampled_from(PARQUET_KINDS),
)
def test_parquet_column_of_any_type_gives_report_or_input_error(column, kind, scratch):
    import pyarrow as pa
    import pyarrow.parquet as pq

    n = 12
    cols = {
        "case_id": pa.array(["A"] * 6 + ["B"] * 6),
        "elapsed": pa.array([float(i % 6) for i in range(n)]),
        "agent": pa.array(["sevoflurane"] * n),
        "o2": pa.array([1.0] * n),
        "dial": pa.array([2.0] * n),
    }
    if column == "time":
        cols.pop("elapsed")
    cols[column] = _arrow_column(kind, n)
    path = scratch / "typed.parquet"
    pq.write_table(pa.table(cols), path)
    try:
        r = audit_records([path], threads=1)
    except InputError as exc:
        assert "\n" not in str(exc) and str(path) in str(exc)
        return
    assert r.report.rows_read == n


@pytest.fixture(scope="module")
def small_parquet(scratch):
    import pyarrow as pa
    import pyarrow.parquet as pq

    n = 3000
    t = np.arange(n) % 100
    table = pa.table(
        {
            "case_id": [f"C{i // 100}" for i in range(n)],
            "elapsed": t.astype(float),
            "agent": ["sevoflurane"] * n,
            "o2": np.full(n, 1.0),
            "air": np.linspace(0, 2, n),
            "dial": np.full(n, 2.0),
        }
    )
    paths = {}
    for compression in ("snappy", "zstd", "gzip", "none"):
        p = scratch / f"small_{compression}.parquet"
        pq.write_table(table, p, compression=compression, row_group_size=700, use_dictionary=compression != "none")
        paths[compression] = p
    return paths


@settings(SLOW, max_examples=60)
@given(
    compression=st.sampled_from(["snappy", "zstd", "gzip", "none"]),
    where=st.floats(0, 1),
    junk=st.binary(min_size=1, max_size=64),
)
def test_damaged_parquet_pages_give_report_or_one_message_naming_the_file(
    compression, where, junk, small_parquet, scratch
):
    good = small_parquet[compression].read_bytes()
    footer = int.from_bytes(good[-8:-4], "little")
    data_end = len(good) - 8 - footer  # the footer stays intact: only pages are damaged
    pos = 4 + int(where * (data_end - 4 - len(junk)))
    damaged = good[:pos] + junk + good[pos + len(junk) :]
    path = scratch / "damaged_pages.parquet"
    path.write_bytes(damaged[: len(good)])
    try:
        audit_records([small_parquet["snappy"], path], threads=1)
    except InputError as exc:
        assert "\n" not in str(exc) and str(path) in str(exc)


# --- deep TOML --------------------------------------------------------------------------


@st.composite
def deep_toml(draw):
    levels = draw(st.one_of(st.integers(0, 12), st.sampled_from([50, 300, 1000, 3000])))
    how = draw(st.sampled_from(["array", "inline", "header", "dotted", "array_of_tables"]))
    if how == "array":
        return f"nested = {'[' * levels}1{']' * levels}\n", levels
    if how == "inline":
        return "nested = " + "{a = " * levels + "1" + "}" * levels + "\n", levels
    if how == "header":
        return "[t" + ".b" * max(levels - 1, 0) + "]\nx = 1\n" if levels else "x = 1\n", levels
    if how == "dotted":
        return ".".join(["k"] * (levels + 1)) + " = 1\n", levels
    return "[[t" + ".b" * max(levels - 1, 0) + "]]\nx = 1\n" if levels else "x = 1\n", levels


@settings(FUZZ, max_examples=300)
@given(deep=deep_toml(), kind=st.sampled_from(["plan", "settings", "scenario"]), before=st.booleans())
def test_deep_toml_gives_the_same_verdict_on_the_pages_and_the_command_line(deep, kind, before, tmp_path_factory):
    from model.base.files import MAX_TOML_DEPTH
    from model.io.plans import parse_plan_text
    from model.io.scenario import parse_scenario_text
    from model.io.uploads import check_upload
    from model.reference import Reference

    text, levels = deep
    demo = {
        "plan": ROOT / "demo_data" / "plans" / "lap_chole_low_flow.toml",
        "scenario": ROOT / "demo_data" / "year" / "baseline_2l.toml",
        "settings": None,
    }[kind]
    full = (
        ((demo.read_text() + "\n") if demo else "") + text
        if before
        else text + (("\n" + demo.read_text()) if demo else "")
    )
    try:
        check_upload("x.toml", full.encode(), kind)
        page = "ok"
    except InputError as exc:
        if "characters" in str(exc):
            return  # refused first for a line over the length limit: no verdict on depth
        page = "deep" if "nest at most" in str(exc) else "other"
    try:
        if kind == "plan":
            parse_plan_text(full, "x.toml")
        elif kind == "scenario":
            parse_scenario_text(full, "x.toml", demo.parent)
        else:
            from model.base.files import parse_toml

            Reference().with_overrides(parse_toml(full, "x.toml", "settings"), "x.toml")
        cli = "ok"
    except InputError as exc:
        cli = "deep" if "nest at most" in str(exc) else "other"
    assert (page == "deep") == (cli == "deep")
    if levels > MAX_TOML_DEPTH:
        assert page != "ok" and cli != "ok"
    elif levels <= MAX_TOML_DEPTH - 2:  # appended inside a demo table it sits 2 deeper at most
        assert page != "deep" and cli != "deep"


# --- long and impossible names -----------------------------------------------------------

_NAMES = st.one_of(
    st.integers(250, 5000).map(lambda n: "n" * n),
    st.integers(1, 60).map(lambda n: "/".join(["d" * 250] * n)),
    st.sampled_from(
        [
            "a\x00b",
            "/proc/self/mem/x",
            "/dev/null",
            "/",
            ".",
            "..",
            "~nobody/x",
            "/root/../../etc/passwd/x",
            "\u202e.toml",
            "C:\\x\\y",
            "nonexistent/file",
        ]
    ),
    st.text(min_size=1, max_size=300),
)


@settings(FUZZ, max_examples=800)
@given(
    name=_NAMES,
    suffix=st.sampled_from([".toml", ".csv", ".parquet", ""]),
    reader=st.sampled_from(["plan", "scenario", "casemix", "records", "purchases", "settings"]),
)
def test_long_and_impossible_file_names_give_input_error(name, suffix, reader):
    from model.io.casemix import load_casemix
    from model.io.plans import load_plan
    from model.io.record_files import inspect_file
    from model.io.scenario import load_scenario
    from model.reference import load_settings

    call = {
        "plan": load_plan,
        "scenario": load_scenario,
        "casemix": load_casemix,
        "records": inspect_file,
        "purchases": purchases.load_purchases,
        "settings": load_settings,
    }[reader]
    try:
        call(name + suffix)
    except InputError as exc:
        assert "\n" not in str(exc)


@settings(FUZZ, max_examples=400)
@given(name=_NAMES)
def test_case_mix_plan_cell_with_any_name_gives_input_error(name):
    from model.io.casemix import parse_casemix_text

    out = io.StringIO()
    csv.writer(out, lineterminator="\n").writerows(
        [["case_type", "cases_per_year", "median_duration", "sevoflurane", "plan"], ["t", "10", "90", "1", name]]
    )
    with pytest.raises(InputError):
        parse_casemix_text(out.getvalue(), str(ROOT / "demo_data" / "year" / "fuzz.csv"))


# --- foreign and damaged stores ---------------------------------------------------------


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
