"""Readers take a file's name with its bytes or its path: messages name the user's file from the start.

Uploads reach the record and purchase readers as bytes with the name as uploaded, demo files
as their path with their plain name; nothing is copied for the messages' sake and no
message names a server folder.
"""

from __future__ import annotations

import tempfile
from pathlib import Path

import numpy as np
import pytest

import model.audit.engine
from model.audit.engine import audit_records
from model.base.errors import InputError
from model.base.files import Source
from model.io.purchases import load_purchases, read_purchases
from model.io.record_files import expand_paths, inspect_file
from model.io.records import read_records
from tests.helpers.pages import page

ROOT = Path(__file__).resolve().parents[2]

GOOD_CSV = (
    b"case_id,elapsed,agent,o2,air,dial\n"
    b"A,0,sevoflurane,1,1,2\n"
    b"A,1,sevoflurane,1,1,2\n"
    b"A,2,sevoflurane,banana,1,2\n"
    b"A,3,sevoflurane,1,1,2\n"
)
PURCHASES_CSV = (
    b"month,item,quantity,unit,size\n"
    b"2025-01,sevoflurane,3,bottle,\n"
    b"2025-13,sevoflurane,1,bottle,\n"
    b"2025-02,oxygen,2,cylinder,9000 L\n"
)
SERVER_PLACES = (tempfile.gettempdir(), str(ROOT), str(Path.home()))


def _no_server_place(text: str) -> None:
    for place in SERVER_PLACES:
        assert place not in text, text
    assert "gas-ledger-" not in text, text


def _parquet_bytes(n: int = 40) -> bytes:
    import io

    import pyarrow as pa
    import pyarrow.parquet as pq

    buf = io.BytesIO()
    t = np.arange(n) % 10
    pq.write_table(
        pa.table(
            {
                "case_id": [f"C{i // 10}" for i in range(n)],
                "elapsed": t.astype(float),
                "agent": ["sevoflurane"] * n,
                "o2": np.full(n, 1.0),
                "air": np.full(n, 1.0),
                "dial": np.full(n, 2.0),
            }
        ),
        buf,
    )
    return buf.getvalue()


def test_csv_bytes_are_read_and_every_message_names_the_upload():
    name = "theatre 3 export.csv"
    recs = read_records(Source(name, data=GOOD_CSV))
    try:
        assert recs.report.files == [name]
    finally:
        recs.close()
    result = audit_records([Source(name, data=GOOD_CSV)])
    issues = result.report.issues
    # Line 4 of the file (header = line 1) holds the text in a number column.
    assert list(issues["file"]) == [name]
    assert issues["message"].iloc[0].startswith(f"{name}: line 4: column 'o2' holds 'banana'")
    assert result.report.summary()["files"] == [name]


def test_csv_bytes_read_as_the_same_file_on_disk(tmp_path):
    on_disk = tmp_path / "same.csv"
    on_disk.write_bytes(GOOD_CSV)
    from_bytes = audit_records([Source("same.csv", data=GOOD_CSV)])
    from_path = audit_records([on_disk])
    cols = ["case_id", "minutes", "liquid_agent_ml", "co2e_total_kg"]
    assert from_bytes.cases[cols].equals(from_path.cases[cols])
    # A path is named by the path as given, as before.
    assert from_path.report.files == [str(on_disk)]


def test_a_long_upload_name_is_named_whole_when_columns_are_missing():
    name = "theatre_export_" + "x" * 90 + ".csv"
    with pytest.raises(InputError) as err:
        read_records(Source(name, data=b"case_id,elapsed,agent\nA,0,sevo\n"))
    assert str(err.value).startswith(name + ": columns")
    _no_server_place(str(err.value))


def test_parquet_bytes_are_named_by_the_upload_and_their_copy_is_removed():
    name = "export.parquet"
    recs = read_records([Source(name, data=_parquet_bytes())])
    folder = Path(recs._written_dir)
    assert recs.report.files == [name] and recs.files[0].name == name
    assert folder.is_dir() and name not in str(recs.files[0].path)  # the copy carries no user text
    recs.close()
    assert not folder.exists()


def test_damaged_parquet_bytes_are_named_by_the_upload():
    good = _parquet_bytes(3000)
    footer = int.from_bytes(good[-8:-4], "little")
    data_end = len(good) - 8 - footer
    seen = 0
    for where in np.linspace(0.05, 0.95, 12):
        pos = 4 + int(where * (data_end - 68))
        damaged = good[:pos] + b"\xff" * 64 + good[pos + 64 :]
        try:
            audit_records([Source("ward_b.parquet", data=damaged)], threads=1)
        except InputError as exc:
            seen += 1
            assert "\n" not in str(exc) and "ward_b.parquet" in str(exc)
            _no_server_place(str(exc))
            assert "0000.parquet" not in str(exc)
    # Common practice, no source: junk written over data pages breaks at least some reads.
    assert seen


def test_inspect_file_names_csv_bytes_and_refuses_utf16():
    rf = inspect_file(Source("x.csv", data=GOOD_CSV))
    assert rf.name == "x.csv" and rf.path == "" and set(rf.columns) >= {"case_id", "elapsed", "o2"}
    with pytest.raises(InputError, match=r"^x16\.csv: .*UTF-16"):
        inspect_file(Source("x16.csv", data="case_id,elapsed\n".encode("utf-16")))
    with pytest.raises(InputError, match=r"^notes\.txt: "):
        inspect_file(Source("notes.txt", data=b"a,b\n"))


def test_expand_paths_keeps_sources_and_names_paths_as_given(tmp_path):
    p = tmp_path / "a.csv"
    p.write_bytes(GOOD_CSV)
    up = Source("up.csv", data=GOOD_CSV)
    out = expand_paths([up, str(p), p, Source("a.csv", path=p)])
    assert out[0] is up
    assert [s.name for s in out] == ["up.csv", str(p)]  # the same file once


def test_purchases_bytes_name_the_upload_on_every_set_aside_line():
    name = "orders 2025.csv"
    read = load_purchases(Source(name, data=PURCHASES_CSV))
    assert len(read.table) == 2
    assert read.messages == [f"{name}, line 3: month: got '2025-13'; expected a month as YYYY-MM, e.g. 2025-03"]
    with pytest.raises(InputError, match=r"^orders 2025\.csv, line 3: month"):
        read_purchases(Source(name, data=PURCHASES_CSV))


def test_purchases_parquet_bytes_read_as_the_file(tmp_path):
    import pandas as pd

    frame = pd.DataFrame({"month": ["2025-01"], "item": ["sevoflurane"], "quantity": ["3"], "unit": ["bottle"]})
    p = tmp_path / "p.parquet"
    frame.to_parquet(p)
    from_bytes = load_purchases(Source("p.parquet", data=p.read_bytes()))
    assert from_bytes.table.equals(load_purchases(p).table)


def test_a_source_has_exactly_one_of_bytes_and_path(tmp_path):
    with pytest.raises(ValueError):
        Source("x.csv")
    with pytest.raises(ValueError):
        Source("x.csv", data=b"", path=tmp_path / "x.csv")


def _audited_sources(monkeypatch) -> list:
    seen: list = []
    real = model.audit.engine.audit_records

    def spy(records, **kwargs):
        seen.append(list(records))
        return real(records, **kwargs)

    monkeypatch.setattr(model.audit.engine, "audit_records", spy)
    return seen


def test_record_audit_reads_the_demo_files_in_place(monkeypatch):
    seen = _audited_sources(monkeypatch)
    at = page("record_audit.py")
    assert not at.error
    demo = ROOT / "demo_data" / "records"
    assert seen and all(s.path is not None and s.path.parent == demo and s.name == s.path.name for s in seen[0])


def test_emissions_report_reads_the_demo_files_in_place(monkeypatch):
    import streamlit as st

    st.cache_data.clear()  # the page's audit is cached per process: run it here
    seen = _audited_sources(monkeypatch)
    page("emissions_report.py")
    demo = ROOT / "demo_data" / "records"
    assert seen
    for sources in seen:
        assert all(s.path is not None and s.path.parent == demo and s.name == s.path.name for s in sources)


def test_an_uploaded_record_file_is_named_in_the_page_message():
    at = page("record_audit.py")
    at.radio(key="ra_source").set_value("Upload files").run()
    name = "ward_b_export.csv"
    at.get("file_uploader")[0].upload(name, GOOD_CSV).run()
    assert not at.exception, [e.message for e in at.exception]
    assert not at.error
    issues = next(df.value for df in at.dataframe if "message" in df.value.columns)
    assert list(issues["file"]) == [name]
    assert issues["message"].iloc[0].startswith("column 'o2' holds 'banana'")  # file and line: columns of their own
    shown = [str(x) for df in at.dataframe for col in df.value.columns for x in df.value[col].astype(str)]
    _no_server_place(" ".join(shown))
