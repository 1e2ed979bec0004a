"""A case is its file and its case id: the same id in two files is two cases unless theatre and time agree."""

from __future__ import annotations

import pandas as pd
import pytest

from model.audit.engine import audit_records

HEADER = "case_id,time,theatre,agent,o2,air,dial\n"


def _file(path, case, theatre, day, start_min, n=11, o2=0.5):
    clock = [f"{8 + (start_min + k) // 60:02d}:{(start_min + k) % 60:02d}:00" for k in range(n)]
    rows = "".join(f"{case},{day} {t},{theatre},sevoflurane,{o2},0.5,2\n" for t in clock)
    path.write_text(HEADER + rows, encoding="utf-8")
    return path


@pytest.mark.parametrize("engine", ["auto", "memory", "sql"])
def test_the_same_case_id_in_two_files_of_other_theatres_and_days_is_two_cases(tmp_path, engine):
    a = _file(tmp_path / "day-1.csv", "1", "Alder", "2025-03-04", 0, o2=0.5)
    b = _file(tmp_path / "day-2.csv", "1", "Birch", "2025-03-05", 0, n=21, o2=2.0)
    both = audit_records([a, b], engine=engine)
    # The independent computation: each file audited on its own.
    alone = [audit_records([p]).cases.iloc[0] for p in (a, b)]
    assert both.cases["case_id"].tolist() == ["1 [day-1.csv]", "1 [day-2.csv]"]
    assert both.cases["theatre"].tolist() == ["Alder", "Birch"]
    for col in ("minutes", "oxygen_l", "liquid_agent_ml"):
        assert both.cases[col].tolist() == pytest.approx([float(x[col]) for x in alone])
    assert both.report.rows_set_aside == 0
    notes = both.report.notes
    assert any("case id(s) appear in more than one file" in n and "'1' in day-1.csv, day-2.csv" in n for n in notes)


@pytest.mark.parametrize("engine", ["auto", "memory", "sql"])
def test_a_case_cut_across_two_files_of_one_theatre_whose_times_meet_is_one_case(tmp_path, engine):
    a = _file(tmp_path / "part-1.csv", "7", "Alder", "2025-03-04", 0)
    b = _file(tmp_path / "part-2.csv", "7", "Alder", "2025-03-04", 12)  # 2 min after the last sample
    r = audit_records([a, b], engine=engine)
    assert r.cases["case_id"].tolist() == ["7"]
    assert r.cases["minutes"].tolist() == [22.0]
    assert not r.report.notes


def test_same_theatre_on_another_day_or_far_later_is_another_case(tmp_path):
    a = _file(tmp_path / "a.csv", "7", "Alder", "2025-03-04", 0)
    b = _file(tmp_path / "b.csv", "7", "Alder", "2025-03-04", 120)  # two hours later: beyond the gap limit
    c = _file(tmp_path / "c.csv", "7", "Alder", "2025-03-11", 0)
    r = audit_records([a, b, c])
    assert r.cases["case_id"].tolist() == ["7 [a.csv]", "7 [b.csv]", "7 [c.csv]"]
    assert r.cases["minutes"].tolist() == [10.0, 10.0, 10.0]


def test_daily_exports_that_each_number_their_cases_from_one_are_one_case_a_file(tmp_path):
    files = [_file(tmp_path / f"day-{d:02d}.csv", "1", "Alder", f"2025-03-{d:02d}", 0) for d in range(1, 21)]
    r = audit_records(files)
    assert len(r.cases) == 20
    # Plain sum over the rows written: 20 cases of 10 minutes at 1 L/min of fresh gas.
    assert float(r.cases["minutes"].sum()) == 200.0
    assert r.cases["month"].tolist() == ["2025-03"] * 20


def test_parquet_files_keep_their_cases_apart_too(tmp_path):
    frames = []
    for k, theatre in enumerate(("Alder", "Birch")):
        times = pd.date_range(f"2025-03-0{k + 4} 08:00", periods=11, freq="min")
        frame = pd.DataFrame({"case_id": "X", "time": times, "theatre": theatre, "agent": "sevoflurane"})
        frame = frame.assign(o2=0.5, air=0.5, dial=2.0)
        frames.append(frame)
        frame.to_parquet(tmp_path / f"p{k}.parquet", index=False)
    r = audit_records([tmp_path / "p0.parquet", tmp_path / "p1.parquet"])
    assert r.cases["case_id"].tolist() == ["X [p0.parquet]", "X [p1.parquet]"]
    assert r.cases["minutes"].tolist() == [10.0, 10.0]


def test_the_note_on_reused_ids_stays_one_short_line_for_many_files(tmp_path):
    files = [_file(tmp_path / f"day-{d:02d}.csv", "1", "Alder", f"2025-03-{d:02d}", 0) for d in range(1, 21)]
    (note,) = audit_records(files).report.notes
    assert "'1' in day-01.csv, day-02.csv, day-03.csv and 17 more files" in note
    assert len(note) < 400 and "\n" not in note
