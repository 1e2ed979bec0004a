"""Record files with broken lines or damaged pages: each bad line set aside alone, each bad file one message."""

from __future__ import annotations

from pathlib import Path

import pytest

from model.audit.engine import audit_records
from model.base.errors import InputError

ROOT = Path(__file__).resolve().parents[3]


BIRCH = ROOT / "demo_data" / "records" / "fernhollow_birch_cases.csv"


HEADER = "case_id,elapsed,theatre,agent,o2,air,n2o,dial\n"


def _good_lines(n: int) -> list[str]:
    """N valid sample lines: cases of 10 minutes, sevoflurane at 2 %, 1 L/min."""
    return [f"C{i // 10},{i % 10},Alder,sevoflurane,0.5,0.5,0,2" for i in range(n)]


def _totals(path: Path) -> tuple[float, float]:
    cases = audit_records([path], threads=1).cases
    return float(cases["liquid_agent_ml"].sum()), float(cases["minutes"].sum())


def _write(path: Path, data: bytes) -> Path:
    path.write_bytes(data)
    return path


def test_unclosed_quote_sets_aside_its_line_alone_and_keeps_line_numbers(tmp_path):
    lines = BIRCH.read_text(encoding="utf-8").splitlines()
    head, data = lines[:3], lines[3:303]
    broken = data[100].rsplit(",Birch,", 1)[0] + ',"Birch,Sevo,6000.0,0.0,100.0,4.5'
    bad = _write(tmp_path / "bad.csv", "\n".join(head + data[:100] + [broken] + data[101:]).encode() + b"\n")
    clean = _write(tmp_path / "clean.csv", "\n".join(head + data[:100] + data[101:]).encode() + b"\n")
    r = audit_records([bad], threads=1)
    assert r.report.rows_read == 300
    assert r.report.set_aside["unreadable"] == 1
    assert not r.report.notes
    row = r.report.issues.loc[r.report.issues["kind"] == "unreadable", "row"].tolist()
    assert row == [104]  # three lines before the data: line 104 is data line 101
    # The demo file's own bad lines after the broken one keep their true line numbers.
    expected = {n for n, text in enumerate(head + data, start=1)} - {1, 2, 3}
    assert set(r.report.issues["row"]) <= expected
    assert _totals(bad) == pytest.approx(_totals(clean), rel=1e-12)


@pytest.mark.parametrize(
    "bad_line, kind",
    [
        (b"C9,3,Al\rder,sevoflurane,0.5,0.5,0,2", "unreadable"),  # a CR inside a cell
        (b"C9,3,Alder,sevoflurane,0.5,0.5,0,2\rC9,4,Alder,sevoflurane,0.5,0.5,0,2", "unreadable"),  # CR ending
        (b"C9,3,Alder,sevoflurane,0.5,0.5,0,2,,,", "field_count"),  # extra empty trailing fields
        (b"C9,3,Alder,sevoflurane,0.5,0.5,0,2,", "field_count"),  # one trailing comma
        (b'C9,3,"Alder,B",sevoflurane,0.5,0.5,0', "field_count"),  # a quoted comma is no field break
    ],
)
def test_lone_cr_and_extra_fields_set_aside_one_line(tmp_path, bad_line, kind):
    good = [s.encode() for s in _good_lines(40)]
    bad = _write(tmp_path / "bad.csv", HEADER.encode() + b"\n".join(good[:20] + [bad_line] + good[20:]) + b"\n")
    clean = _write(tmp_path / "clean.csv", HEADER.encode() + b"\n".join(good) + b"\n")
    r = audit_records([bad], threads=1)
    assert r.report.rows_read == 41 and r.report.rows_valid == 40
    assert r.report.issues[["row", "kind"]].values.tolist() == [[22, kind]]
    assert r.report.issues["message"].iloc[0].startswith(f"{bad}: line 22: ")
    assert _totals(bad) == pytest.approx(_totals(clean), rel=1e-12)


def test_crlf_line_endings_read_like_lf(tmp_path):
    good = _good_lines(30)
    lf = _write(tmp_path / "lf.csv", (HEADER + "\n".join(good) + "\n").encode())
    crlf = _write(tmp_path / "crlf.csv", (HEADER + "\n".join(good) + "\n").replace("\n", "\r\n").encode())
    r = audit_records([crlf], threads=1)
    assert r.report.rows_valid == 30 and r.report.rows_set_aside == 0
    assert _totals(crlf) == pytest.approx(_totals(lf), rel=1e-12)


def _parquet_table(n: int = 2000):
    import numpy as np
    import pyarrow as pa

    t = np.arange(n) % 100
    return {
        "case_id": pa.array([f"C{i // 100}" for i in range(n)]),
        "elapsed": pa.array(t.astype(float)),
        "agent": pa.array(["sevoflurane"] * n),
        "o2": pa.array(np.full(n, 1.0)),
        "dial": pa.array(np.full(n, 2.0)),
    }


@pytest.mark.parametrize(
    "column, arrow_type",
    [
        ("o2", "list<double>"),
        ("elapsed", "list<double>"),
        ("dial", "large_list<double>"),
        ("o2", "struct"),
        ("case_id", "list<string>"),
        ("agent", "map"),
    ],
)
def test_parquet_column_of_a_nested_type_is_refused_naming_it(tmp_path, column, arrow_type):
    import pyarrow as pa
    import pyarrow.parquet as pq

    cols = _parquet_table(4)
    values = cols[column].to_pylist()
    if arrow_type == "list<double>":
        cols[column] = pa.array([[v] for v in values], type=pa.list_(pa.float64()))
    elif arrow_type == "large_list<double>":
        cols[column] = pa.array([[v] for v in values], type=pa.large_list(pa.float64()))
    elif arrow_type == "list<string>":
        cols[column] = pa.array([[v] for v in values], type=pa.list_(pa.string()))
    elif arrow_type == "struct":
        cols[column] = pa.array([{"v": v} for v in values])
    else:
        cols[column] = pa.array([[("k", str(v))] for v in values], type=pa.map_(pa.string(), pa.string()))
    path = tmp_path / "nested.parquet"
    pq.write_table(pa.table(cols), path)
    with pytest.raises(InputError) as err:
        audit_records([path], threads=1)
    assert f"column '{column}'" in str(err.value) and str(path) in str(err.value)


@pytest.mark.parametrize("compression", ["snappy", "zstd", "none"])
def test_damaged_parquet_pages_give_one_message_naming_the_file(tmp_path, compression):
    import random

    import pyarrow as pa
    import pyarrow.parquet as pq

    good_path = tmp_path / "good.parquet"
    pq.write_table(pa.table(_parquet_table()), good_path, compression=compression, row_group_size=500)
    good = good_path.read_bytes()
    footer = int.from_bytes(good[-8:-4], "little")
    data_end = len(good) - 8 - footer
    rng = random.Random(15)  # fixed damage: the same bytes every run
    failures = 0
    for k in range(25):
        pos = rng.randrange(4, data_end - 8)
        damaged = bytearray(good)
        damaged[pos : pos + 8] = bytes(rng.randrange(256) for _ in range(8))
        path = tmp_path / f"damaged_{k}.parquet"
        path.write_bytes(bytes(damaged))
        # Read alongside a sound file: the message must name the damaged one.
        try:
            audit_records([good_path, path], threads=1)
        except InputError as exc:
            failures += 1
            assert str(path) in str(exc) and "\n" not in str(exc)
    assert failures > 0  # the damage did reach the readers
