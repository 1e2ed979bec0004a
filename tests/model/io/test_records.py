"""Reading and checking case records: format, units, row-numbered messages, nothing lost."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from model.audit.engine import audit_records
from model.base.errors import InputError
from model.freshgas import delivered_fractions
from model.io.record_files import inspect_file
from model.io.record_reading import ISSUE_KINDS

HEADER = "case_id,elapsed,theatre,agent,o2,air,n2o,dial\n"


def _csv(tmp_path: Path, body: str, name: str = "r.csv", header: str = HEADER, raw: bytes | None = None) -> Path:
    p = tmp_path / name
    if raw is not None:
        p.write_bytes(raw)
    else:
        p.write_text(header + body, encoding="utf-8")
    return p


def _rows(case="A", n=11, o2=0.5, air=0.5, n2o=0.0, dial=2.0, agent="sevoflurane", theatre="Alder"):
    return "".join(f"{case},{t},{theatre},{agent},{o2},{air},{n2o},{dial}\n" for t in range(n))


def test_clean_file_uses_every_row(tmp_path):
    p = _csv(tmp_path, _rows("A") + _rows("B"))
    r = audit_records([p])
    assert r.report.rows_read == 22
    assert r.report.rows_valid == 22
    assert r.report.rows_set_aside == 0
    assert set(r.cases["case_id"]) == {"A", "B"}
    assert r.cases["minutes"].tolist() == [10.0, 10.0]


def test_units_line_and_column_units_convert_with_pint(tmp_path):
    base = audit_records([_csv(tmp_path, _rows("A"), "base.csv")]).cases
    # Source: SI definitions (1 L = 1000 mL, 1 min = 60 s), applied through pint.
    ml = (
        "# units: o2=mL/min, air=mL/min, elapsed=s\n"
        + HEADER
        + "".join(f"A,{t * 60},Alder,sevoflurane,500,500,0,2\n" for t in range(11))
    )
    p1 = tmp_path / "ml.csv"
    p1.write_text(ml, encoding="utf-8")
    named = "case_id,elapsed [h],theatre,agent,o2 [mL/min],air (L/min),n2o,dial [%]\n" + "".join(
        f"A,{t / 60},Alder,sevoflurane,500,0.5,0,2\n" for t in range(11)
    )
    p2 = tmp_path / "named.csv"
    p2.write_text(named, encoding="utf-8")
    for p in (p1, p2):
        got = audit_records([p]).cases
        for col in ("minutes", "oxygen_l", "air_l", "liquid_agent_ml"):
            assert got[col].iloc[0] == pytest.approx(base[col].iloc[0], rel=1e-12), (p.name, col)


def test_total_flow_with_o2_share_gives_that_fresh_gas_o2(tmp_path):
    body = "case_id,elapsed,agent,fgf,o2_share,n2o_share,dial\n" + "".join(
        f"A,{t},sevoflurane,2.0,40,50,2\n" for t in range(11)
    )
    p = tmp_path / "total.csv"
    p.write_text(body, encoding="utf-8")
    c = audit_records([p]).cases.iloc[0]
    o2, air, n2o = c["oxygen_l"] / 10, c["air_l"] / 10, c["nitrous_oxide_l"] / 10
    fgf, fd_o2, fd_n2o = delivered_fractions(o2, air, n2o)
    # The foundation's fractions (US Standard Atmosphere 1976 air) give back the shares.
    assert fgf == pytest.approx(2.0)
    assert fd_o2 == pytest.approx(0.40)
    assert fd_n2o == pytest.approx(0.50)


@pytest.mark.parametrize(
    "header, missing",
    [
        ("elapsed,agent,o2,dial\n", "case_id"),
        ("case_id,agent,o2,dial\n", "time or elapsed"),
        ("case_id,elapsed,o2,dial\n", "agent"),
        ("case_id,elapsed,agent,dial\n", "flows"),
    ],
)
def test_missing_columns_raise_one_line_naming_them(tmp_path, header, missing):
    p = _csv(tmp_path, "A,1,sevoflurane,1\n", header=header)
    with pytest.raises(InputError) as err:
        audit_records([p])
    assert missing in str(err.value) and str(p) in str(err.value)
    assert "\n" not in str(err.value)


def test_unknown_unit_and_utf16_are_file_errors(tmp_path):
    p = _csv(tmp_path, _rows(), header="case_id,elapsed,theatre,agent,o2 [furlong],air,n2o,dial\n")
    with pytest.raises(InputError, match="o2 \\[furlong\\]"):
        audit_records([p])
    p16 = _csv(tmp_path, "", "u16.csv", raw=(HEADER + _rows()).encode("utf-16"))
    with pytest.raises(InputError, match="UTF-16"):
        inspect_file(p16)


def test_each_kind_of_bad_row_is_reported_with_its_line(tmp_path):
    good = _rows("A", 5)
    lines = [
        ("A,5,Alder,sevoflurane,abc,0.5,0,2", "text_in_number"),
        ("A,6,Alder,xenon,0.5,0.5,0,2", "unknown_agent"),
        ("A,7,Alder,sevoflurane,-1,0.5,0,2", "negative_flow"),
        ("A,8,Alder,sevoflurane,25,0.5,0,2", "absurd_flow"),
        ("A,9,Alder,sevoflurane,0.5,0.5,0,9.5", "absurd_setting"),
        (",10,Alder,sevoflurane,0.5,0.5,0,2", "missing_value"),
        ("A,11,Alder,sevoflurane,0.5,0.5,0,2,extra", "field_count"),
        ("A,4,Alder,sevoflurane,0.5,0.5,0,2", "duplicate_time"),
        ("A,3,Alder,sevoflurane,0.5,0.5,0,2", "time_backwards"),
    ]
    body = good + "".join(line + "\n" for line, _ in lines) + "A,12,Alder,sevoflurane,0.5,0.5,0,2\n"
    raw = (
        (HEADER + body).encode() + b"A,13,Alder,sevo\xfflurane,0.5,0.5,0,2\n" + b"A,14,Alder,sevoflurane,0.5,0.5,0,2\n"
    )
    p = _csv(tmp_path, "", raw=raw)
    r = audit_records([p])
    issues = r.report.issues
    # Header is line 1; five good rows are lines 2-6; the bad lines follow from line 7.
    expected = {7 + i: kind for i, (_, kind) in enumerate(lines)}
    expected[7 + len(lines) + 1] = "encoding"
    got = dict(zip(issues["row"], issues["kind"], strict=True))
    assert got == expected
    for row, msg in zip(issues["row"], issues["message"], strict=True):
        assert msg.startswith(f"{p}: line {row}: ")
    assert r.report.rows_valid == 5 + 2
    assert r.report.rows_read == 5 + 2 + len(lines) + 1
    assert sum(r.report.set_aside.values()) == len(lines) + 1
    assert set(r.report.set_aside) == set(ISSUE_KINDS)


def test_gap_is_reported_and_not_filled(tmp_path):
    body = "".join(f"A,{t},Alder,sevoflurane,1,0,0,2\n" for t in [0, 1, 2, 12, 13, 14])
    r = audit_records([_csv(tmp_path, body)], gap_limit_min=5)
    assert r.report.gaps == 1
    assert r.report.gap_minutes == 10
    assert r.report.gap_list["row"].tolist() == [4]
    assert r.cases["minutes"].iloc[0] == 4.0  # 0-2 and 12-14 are counted, 2-12 is not
    assert r.report.rows_valid == 6


def test_parquet_reports_row_numbers_and_reads_typed_columns(tmp_path):
    df = pd.DataFrame(
        {
            "case_id": ["A"] * 4,
            "time": pd.to_datetime(["2025-03-01 08:00", "2025-03-01 08:01", "2025-03-01 08:01", "2025-03-01 08:02"]),
            "agent": "sevoflurane",
            "o2 [L/min]": [1.0, 1.0, 1.0, np.nan],
            "dial": 2.0,
        }
    )
    p = tmp_path / "r.parquet"
    df.to_parquet(p)
    r = audit_records([p])
    assert dict(zip(r.report.issues["row"], r.report.issues["kind"], strict=True)) == {
        3: "duplicate_time",
        4: "missing_value",
    }
    assert r.report.issues["message"].iloc[0].startswith(f"{p}: row 3: ")
    assert r.cases["month"].tolist() == ["2025-03"]


def test_a_glob_of_parquet_files_reads_as_one_set(tmp_path):
    for i in range(3):
        pd.DataFrame(
            {"case_id": [f"C{i}"] * 3, "elapsed": [0.0, 1.0, 2.0], "agent": "isoflurane", "o2": 1.0, "dial": 1.0}
        ).to_parquet(tmp_path / f"part-{i}.parquet")
    r = audit_records([str(tmp_path / "part-*.parquet")])
    assert sorted(r.cases["case_id"]) == ["C0", "C1", "C2"]
    assert r.report.rows_valid == 9
    with pytest.raises(InputError, match="matches no file"):
        audit_records([str(tmp_path / "nothing-*.parquet")])


@pytest.mark.parametrize("text", ["1_5", "0_5", "1,5", "１", "٣", "0x1", "1 5", "inf", "nan", "1e400", "--1", "1e"])
def test_a_number_outside_the_grammar_is_text_in_a_number_column(tmp_path, text):
    # The documented number grammar (docs/formats.md, "Numbers in files"); duckdb alone reads "1_5" as 15.
    body = _rows("A", 5) + f'A,5,Alder,sevoflurane,"{text}",0.5,0,2\n' + "A,6,Alder,sevoflurane,0.5,0.5,0,2\n"
    r = audit_records([_csv(tmp_path, body)])
    assert r.report.set_aside["text_in_number"] == 1
    assert r.report.issues["value"].tolist() == [text]
    assert r.report.rows_valid == 6


@pytest.mark.parametrize(
    "text, accepted",
    [("1_5", False), ("1,5", False), ("１", False), ("inf", False), ("1.5", True), (".5", True), ("2e0", True)],
)
def test_records_and_purchases_read_numbers_by_one_grammar(tmp_path, text, accepted):
    from model.io.purchases import load_purchases

    rec = audit_records([_csv(tmp_path, _rows("A", 3) + f'A,3,Alder,sevoflurane,0.5,"{text}",0,2\n')]).report
    buy = tmp_path / "p.csv"
    buy.write_text(f'month,item,quantity,unit,size\n2025-01,sevoflurane,"{text}",bottle,\n', encoding="utf-8")
    bought = load_purchases(buy)
    assert (rec.set_aside["text_in_number"] == 0) == accepted
    assert (not bought.set_aside) == accepted


def test_parquet_nanosecond_times_are_read_to_microseconds(tmp_path):
    import pyarrow as pa
    import pyarrow.parquet as pq

    n = 11
    # 60.000000999 s apart: the nanoseconds below a microsecond are cut, as docs/formats.md says.
    ns = np.datetime64("2025-03-04T08:00:00", "ns") + np.arange(n) * np.timedelta64(60_000_000_999, "ns")
    cols = {
        "case_id": ["A"] * n,
        "time": pa.array(ns, pa.timestamp("ns")),
        "agent": ["sevoflurane"] * n,
        "o2": [0.5] * n,
        "air": [0.5] * n,
        "dial": [2.0] * n,
    }
    p = tmp_path / "ns.parquet"
    pq.write_table(pa.table(cols), p)
    us = ns.astype("datetime64[us]").astype(np.int64)  # numpy's cut to microseconds
    expected = float((us[-1] // 1000 - us[0] // 1000) / 60000.0)
    for engine in ("auto", "sql"):
        r = audit_records([p], engine=engine)
        assert r.report.rows_valid == n
        assert r.cases["minutes"].tolist() == [pytest.approx(expected, rel=1e-12)]
    # A bad row sends the file through the SQL checks: the same minutes.
    cols["o2"] = [0.5] * (n - 1) + [-1.0]
    pq.write_table(pa.table(cols), p)
    r = audit_records([p])
    assert r.report.set_aside["negative_flow"] == 1
    assert r.cases["minutes"].tolist() == [pytest.approx(float((us[-2] // 1000 - us[0] // 1000) / 60000.0))]


@pytest.mark.parametrize(
    "header, ending",
    [
        ("case_id,elapsed,theatre,agent,o2,air,n2o,dial,", ","),  # spreadsheets end every line in ","
        ("case_id,elapsed,theatre,agent,o2,air,n2o,dial,,", ",,"),
        ("case_id,elapsed,theatre,agent,o2,air,n2o,dial,note,note", ",a,b"),
        ("case_id,elapsed,theatre,agent,o2,air,n2o,dial,,note", ",,b"),
    ],
)
def test_empty_and_repeated_names_of_ignored_columns_leave_the_records_read(tmp_path, header, ending):
    body = "".join(line + ending + "\n" for line in _rows("A").splitlines())
    r = audit_records([_csv(tmp_path, body, header=header + "\n")])
    assert r.report.rows_set_aside == 0
    assert r.cases["minutes"].tolist() == [10.0]


def test_parquet_nanosecond_times_stored_with_a_zone_are_read(tmp_path):
    import pyarrow as pa
    import pyarrow.parquet as pq

    n = 11
    ns = np.datetime64("2025-03-04T08:00:00", "ns") + np.arange(n) * np.timedelta64(60_000_000_999, "ns")
    times = pa.array(ns, pa.timestamp("ns", tz="UTC")).cast(pa.timestamp("ns", tz="Europe/Paris"))
    cols = {"case_id": ["A"] * n, "time": times, "agent": ["sevoflurane"] * n, "o2": [0.5] * n, "dial": [2.0] * n}
    p = tmp_path / "ns_tz.parquet"
    pq.write_table(pa.table(cols), p)
    us = ns.astype("datetime64[us]").astype(np.int64)  # numpy's cut to microseconds
    r = audit_records([p])
    assert r.report.rows_valid == n
    assert r.cases["minutes"].tolist() == [pytest.approx(float((us[-1] // 1000 - us[0] // 1000) / 60000.0))]
    # Paris is UTC+01:00 on 4 March 2025 (zoneinfo): the start in the stored zone.
    assert str(r.cases["start"].iloc[0]) == "2025-03-04 09:00:00"
