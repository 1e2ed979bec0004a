"""The audit engines agree: file by file (with its fast Parquet reading), in memory, and duckdb SQL."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from model.audit.engine import audit_records
from model.audit.memory import read_parquet_file
from model.cli.synth import generate, write, write_many
from model.io.records import read_records


def _same(a, b):
    pd.testing.assert_frame_equal(a.cases, b.cases, check_exact=False, rtol=1e-12, check_dtype=False)
    assert a.report.summary() == b.report.summary()
    pd.testing.assert_frame_equal(a.report.issues, b.report.issues, check_dtype=False)
    pd.testing.assert_frame_equal(a.report.gap_list, b.report.gap_list, check_dtype=False)


def test_file_by_file_equals_sql_and_memory_on_many_parquet_files(tmp_path):
    files = write_many(9000, tmp_path, seed=3, rows_per_file=2500)
    assert len(files) == 4
    # The fast Parquet reading applies (invented records have no problem rows).
    recs = read_records(files)
    assert read_parquet_file(recs, 0)[0] is not None
    recs.close()
    by_file = audit_records(files, engine="files")
    _same(by_file, audit_records(files, engine="sql"))
    _same(by_file, audit_records(files, engine="memory"))
    assert by_file.report.rows_read == 9000


def test_messy_parquet_files_take_the_sql_checks_and_still_agree(tmp_path):
    parts = []
    for k in range(2):
        df = generate(2500, seed=20 + k, first_case=k * 1000).astype({"agent": str, "case_id": str, "theatre": str})
        df.loc[5, "o2 [L/min]"] = -1.0  # negative flow
        df.loc[9, "agent"] = "argon"  # unknown agent
        df.loc[13, "dial [%]"] = np.nan  # end-tidal only
        df.loc[17, "case_id"] = "  "  # missing case id
        df.loc[21, "o2 [L/min]"] = np.inf  # not a number
        df = pd.concat([df, df.iloc[[40]]], ignore_index=True)  # a backward time
        df = df.drop(index=range(100, 110))  # a gap
        parts.append(write(df.reset_index(drop=True), tmp_path / f"m{k}.parquet"))
    recs = read_records(parts)
    assert read_parquet_file(recs, 0)[0] is None  # some row may have a problem: the SQL checks run
    recs.close()
    a = audit_records(parts, engine="files")
    _same(a, audit_records(parts, engine="sql"))
    _same(a, audit_records(parts, engine="memory"))
    assert a.report.set_aside["negative_flow"] == 2 and a.report.set_aside["time_backwards"] == 2
    assert a.report.set_aside["text_in_number"] == 2 and a.report.gaps >= 2


def test_a_case_across_two_files_is_audited_with_the_files_together(tmp_path):
    df = generate(3000, seed=8)
    cut = 1500  # in the middle of a case
    a = write(df.iloc[:cut], tmp_path / "a.parquet")
    b = write(df.iloc[cut:].reset_index(drop=True), tmp_path / "b.parquet")
    split = audit_records([a, b])
    whole = audit_records([write(df, tmp_path / "whole.parquet")])
    cols = [c for c in whole.cases.columns]
    pd.testing.assert_frame_equal(split.cases[cols], whole.cases[cols], check_exact=False, rtol=1e-12)
    assert split.report.rows_valid == whole.report.rows_valid == 3000
    _same(split, audit_records([a, b], engine="sql"))


def test_fast_parquet_reading_of_elapsed_minutes_and_units_equals_csv(tmp_path):
    rng = np.random.default_rng(4)
    n = 400
    df = pd.DataFrame(
        {
            "case": np.repeat(["A", " B", "C "], [150, 150, 100]),
            "elapsed (s)": np.concatenate([np.arange(150) * 60.0, np.arange(150) * 30.0, np.arange(100) * 90.0]),
            "room": "Hazel",
            "agent": np.repeat(["Sevo", "des", "ISO"], [150, 150, 100]),
            "o2 [mL/min]": rng.integers(200, 3000, n),
            "air": rng.uniform(0, 1, n).round(2),
            "dial": np.repeat([2.0, 6.0, 1.0], [150, 150, 100]),
        }
    )
    pq_path = tmp_path / "e.parquet"
    df.to_parquet(pq_path)
    csv_path = tmp_path / "e.csv"
    df.to_csv(csv_path, index=False)
    recs = read_records([pq_path])
    assert read_parquet_file(recs, 0)[0] is not None
    recs.close()
    p, c = audit_records([pq_path]), audit_records([csv_path])
    assert sorted(p.cases["case_id"]) == ["A", "B", "C"]
    pd.testing.assert_frame_equal(p.cases, c.cases, check_exact=False, rtol=1e-12, check_dtype=False)


@pytest.mark.parametrize("engine", ["files", "memory", "sql"])
def test_progress_tells_files_and_rows_done(tmp_path, engine):
    files = write_many(6000, tmp_path, seed=5, rows_per_file=2000)
    seen = []
    audit_records(files, engine=engine, progress=lambda f, t: seen.append((f, t)))
    fractions = [f for f, _ in seen]
    assert fractions == sorted(fractions) and fractions[-1] == 1.0
    if engine == "files":
        assert any("File 2 of 3: 2,000 of 6,000 rows" in t for _, t in seen)
    assert any("6,000 of 6,000 rows" in t for _, t in seen)


def test_cli_progress_line_goes_to_a_terminal_only(tmp_path, capsys, monkeypatch):
    import io
    import json
    import sys

    from model.cli import main
    from model.cli.audit import ProgressLine

    files = write_many(4000, tmp_path, seed=6, rows_per_file=2000)
    assert main(["audit", *map(str, files), "--json"]) == 0
    captured = capsys.readouterr()
    assert json.loads(captured.out)["report"]["rows_read"] == 4000 and captured.err == ""

    class Terminal(io.StringIO):
        def isatty(self):
            return True

    term = Terminal()
    monkeypatch.setattr(sys, "stderr", term)
    assert main(["audit", *map(str, files)]) == 0
    text = term.getvalue()
    assert "File 2 of 2: 2,000 of 4,000 rows done" in text and text.endswith("\r")
    assert "File" not in capsys.readouterr().out
    line = ProgressLine(io.StringIO())
    line(0.5, "half")
    line.clear()
    assert line.stream.getvalue().endswith("\r")


def test_sub_second_times_give_the_same_months_and_minutes_either_way(tmp_path):
    t0 = pd.Timestamp("2025-01-31 23:58:59.999")
    df = pd.DataFrame(
        {
            "case_id": "M",
            "time": [t0 + pd.Timedelta(seconds=37.5 * k) for k in range(8)],
            "agent": "sevoflurane",
            "o2": 1.0,
            "dial": 2.0,
        }
    )
    p = tmp_path / "s.parquet"
    df.to_parquet(p)
    a, b = audit_records([p], engine="files"), audit_records([p], engine="sql")
    _same(a, b)
    assert a.cases["month"].tolist() == ["2025-01"]


@pytest.mark.slow
def test_engines_agree_at_two_million_rows(tmp_path):
    # A hospital's year of minute-level records (the size of the speed goal): the file-by-file
    # engine (compiled pass), the in-memory numpy engine and duckdb's out-of-core SQL give the
    # same cases, counts and messages.
    files = write_many(2_000_000, tmp_path, seed=2025, rows_per_file=5_000_000)
    by_file = audit_records(files, engine="files")
    assert by_file.report.rows_read == 2_000_000 and len(by_file.cases) > 20_000
    _same(by_file, audit_records(files, engine="memory"))
    _same(by_file, audit_records(files, engine="sql", memory_limit="1GB"))


def test_many_small_csv_files_of_one_layout_are_read_and_audited_as_one_table(tmp_path):
    from model.audit.engine import _units

    header = "case_id,time,theatre,agent,o2,air,dial\n"
    files = []
    for i in range(40):
        lines = [f"C{i},2025-03-04 08:{k:02d}:00,Alder,sevoflurane,0.5,0.5,2\n" for k in range(30)]
        if i == 7:
            lines[3] = "C7,2025-03-04 08:03:00,Alder,sevoflurane,0.5\n"  # too few fields: line 5
            lines[9] = "C7,2025-03-04 08:09:00,Alder,sevoflurane,x,0.5,2\n"  # text in a number: line 11
        p = tmp_path / f"day-{i:02d}.csv"
        p.write_text(header + "".join(lines), encoding="utf-8")
        files.append(p)
    (tmp_path / "day-40.csv").write_text(  # another layout (columns in another order)
        "case_id,time,agent,theatre,o2,air,dial\n"
        + "".join(f"C40,2025-03-04 08:{k:02d}:00,sevoflurane,Alder,0.5,0.5,2\n" for k in range(30)),
        encoding="utf-8",
    )
    files.append(tmp_path / "day-40.csv")
    recs = read_records(files)
    # One query for the 40 files of one layout, one for the other: not one a file.
    assert [len(idx) for idx, _ in _units(recs)] == [40, 1]
    recs.close()
    by_file = audit_records(files, engine="files")
    _same(by_file, audit_records(files, engine="sql"))
    issues = by_file.report.issues
    assert issues[["file", "row", "kind"]].values.tolist() == [
        [str(files[7]), 5, "field_count"],
        [str(files[7]), 11, "text_in_number"],
    ]
    assert by_file.report.rows_valid == 41 * 30 - 2
    assert len(by_file.cases) == 41
