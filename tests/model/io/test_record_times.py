"""Times in case records: UTC offsets kept, clock changes, the time zone setting, the documented grammar.

The outside reference for every clock change is the IANA time zone database as Python's
``zoneinfo`` holds it (Europe/London: clocks back at 02:00 BST on 2025-10-26, forward at
01:00 GMT on 2025-03-30).
"""

from __future__ import annotations

import datetime as dt
import json
import os
import subprocess
import sys
import zoneinfo
from pathlib import Path

import pytest

from model.audit.engine import audit_records
from model.base.errors import InputError
from model.io.record_times import check_time_zone, explain_bad_time

LONDON = zoneinfo.ZoneInfo("Europe/London")
HEADER = "case_id,time,theatre,agent,o2,air,dial\n"
ROOT = Path(__file__).resolve().parents[3]


def _csv(tmp_path: Path, times, name="r.csv") -> Path:
    p = tmp_path / name
    p.write_text(HEADER + "".join(f"A,{t},Alder,sevoflurane,0.5,0.5,2\n" for t in times), encoding="utf-8")
    return p


def _instants(start_utc: dt.datetime, n: int, step_min: int = 5) -> list[dt.datetime]:
    return [start_utc + dt.timedelta(minutes=step_min * k) for k in range(n)]


def _with_offset(instant: dt.datetime) -> str:
    """The London wall clock of an instant with its UTC offset, as zoneinfo gives them."""
    return instant.astimezone(LONDON).isoformat(sep=" ")


# Europe/London, zoneinfo: 2025-10-26 00:30 BST (23:30 UTC the day before) to 02:30 GMT.
AUTUMN = _instants(dt.datetime(2025, 10, 25, 23, 30, tzinfo=dt.UTC), 37)
# Europe/London, zoneinfo: 2025-03-30 00:30 GMT to 02:30 BST (01:30 UTC).
SPRING = _instants(dt.datetime(2025, 3, 30, 0, 30, tzinfo=dt.UTC), 13)


@pytest.mark.parametrize("instants", [AUTUMN, SPRING], ids=["autumn", "spring"])
def test_times_with_an_offset_across_a_clock_change_keep_their_minutes(tmp_path, instants):
    times = [_with_offset(t) for t in instants]
    r = audit_records([_csv(tmp_path, times)])
    # zoneinfo: the minutes between the first and last instant.
    expected = (instants[-1] - instants[0]).total_seconds() / 60
    assert r.report.rows_set_aside == 0
    assert r.report.gaps == 0
    assert r.cases["minutes"].tolist() == [expected]


@pytest.mark.parametrize("engine", ["auto", "sql"])
def test_naive_times_in_the_time_zone_setting_follow_its_spring_change(tmp_path, engine):
    # The wall clock zoneinfo shows for each instant, written without its offset.
    times = [t.astimezone(LONDON).strftime("%Y-%m-%d %H:%M:%S") for t in SPRING]
    assert "2025-03-30 00:55:00" in times and "2025-03-30 02:00:00" in times  # the skipped hour
    r = audit_records([_csv(tmp_path, times)], time_zone="Europe/London", engine=engine)
    assert r.report.gaps == 0
    assert r.cases["minutes"].tolist() == [(SPRING[-1] - SPRING[0]).total_seconds() / 60]
    # Without the setting the times are read as written: the skipped hour is a gap.
    assert audit_records([_csv(tmp_path, times)]).report.gaps == 1


def test_naive_times_the_clocks_show_twice_are_set_aside_with_their_reason(tmp_path):
    walls = [t.astimezone(LONDON).replace(tzinfo=None) for t in AUTUMN]
    times = [w.strftime("%Y-%m-%d %H:%M:%S") for w in walls]
    r = audit_records([_csv(tmp_path, times)], time_zone="Europe/London")
    # zoneinfo: a wall-clock time is ambiguous where its two readings (fold 0, 1) differ.
    twice = [
        k + 2
        for k, w in enumerate(walls)
        if w.replace(tzinfo=LONDON, fold=0).utcoffset() != w.replace(tzinfo=LONDON, fold=1).utcoffset()
    ]
    assert len(twice) == 24  # 01:00-01:55 in BST, then again in GMT
    issues = r.report.issues
    assert issues["kind"].tolist() == ["bad_time"] * len(twice)
    assert issues["row"].tolist() == twice
    assert all("show this time twice" in m for m in issues["message"])
    assert r.report.rows_valid == len(times) - len(twice)


def test_parquet_times_stored_with_a_zone_do_not_depend_on_the_servers_zone(tmp_path):
    import pyarrow as pa
    import pyarrow.parquet as pq

    # 2025-07-01 00:30 BST is 2025-06-30 23:30 UTC (zoneinfo): the month is July in London.
    instants = _instants(dt.datetime(2025, 6, 30, 23, 30, tzinfo=dt.UTC), 11)
    n = len(instants)
    table = pa.table(
        {
            "case_id": ["A"] * n,
            "time": pa.array(instants, pa.timestamp("us", tz="UTC")).cast(pa.timestamp("us", tz="Europe/London")),
            "agent": ["sevoflurane"] * n,
            "o2": [0.5] * n,
            "air": [0.5] * n,
            "dial": [2.0] * n,
        }
    )
    p = tmp_path / "tz.parquet"
    pq.write_table(table, p)
    code = (
        "import json, sys; from model.audit.engine import audit_records; "
        "c = audit_records([sys.argv[1]]).cases.iloc[0]; "
        "print(json.dumps([c['month'], str(c['start']), float(c['minutes'])]))"
    )
    seen = []
    for server_zone in ("UTC", "America/New_York", "Asia/Tokyo"):
        env = {**os.environ, "TZ": server_zone, "PYTHONPATH": str(ROOT)}
        out = subprocess.run([sys.executable, "-c", code, str(p)], env=env, capture_output=True, text=True, check=True)
        seen.append(json.loads(out.stdout))
    # The zone stored with the column (Europe/London, zoneinfo) gives month and start; 50 minutes.
    assert seen == [["2025-07", "2025-07-01 00:30:00", 50.0]] * 3


@pytest.mark.parametrize(
    "text, wall",
    [
        ("2025-03-04 01:00:00 PM", "2025-03-04 13:00:00"),
        ("2025-03-04 01:00 pm", "2025-03-04 13:00:00"),
        ("2025-03-04 12:30:00 AM", "2025-03-04 00:30:00"),
        ("2025-03-04 12:30:00 PM", "2025-03-04 12:30:00"),
        ("2025-03-04T11:59:59AM", "2025-03-04 11:59:59"),
        ("2025-03-04 09:15:00+01:00", "2025-03-04 09:15:00"),
        ("2025-03-04T09:15:00Z", "2025-03-04 09:15:00"),
    ],
)
def test_a_12_hour_clock_time_is_read_as_its_24_hour_time(tmp_path, text, wall):
    r = audit_records([_csv(tmp_path, [text, "2099-01-01 00:00:00"])])
    assert r.report.set_aside["bad_time"] == 0
    assert str(r.cases["start"].min()) == wall


@pytest.mark.parametrize(
    "text, why",
    [
        ("2025-03-04 08:15:00+25:00", "not one in use"),
        ("2025-03-04 08:15:00-13:00", "not one in use"),
        ("2025-03-04 08:15:00+01:75", "not one in use"),
        ("2025-03-04 08:15:00 Mars/Olympus_Mons", "expected a date-time"),
        ("2025-03-04 08:15:00 Europe/London", "expected a date-time"),
        ("2025-03-04 08:15:00 not a time", "expected a date-time"),
        ("2025-03-04 08:15:00x", "expected a date-time"),
        ("2025-03-04 13:00:00 PM", "12-hour time runs from 1 to 12"),
        ("2025-03-04 00:30:00 AM", "12-hour time runs from 1 to 12"),
        ("2025-03-04 24:00:00", "not a time of the clock"),
        ("2025-02-30 08:00:00", "not a date of the calendar"),
        ("08:15:00", "expected a date-time"),
    ],
)
def test_a_time_with_anything_undocumented_sets_its_row_aside(tmp_path, text, why):
    times = ["2025-03-04 08:00:00", "2025-03-04 08:05:00", text, "2025-03-04 08:10:00"]
    r = audit_records([_csv(tmp_path, times)])
    issues = r.report.issues
    assert issues["kind"].tolist() == ["bad_time"]
    assert issues["row"].tolist() == [4]
    assert why in issues["message"].iloc[0]
    assert r.cases["minutes"].tolist() == [10.0]


def test_the_time_zone_setting_takes_only_zones_of_the_iana_database(tmp_path):
    assert check_time_zone("Europe/London") == "Europe/London"
    assert check_time_zone(None) is None and check_time_zone("") is None
    for bad in ("Mars/Base", "+01:00x", "Europe/London\n", "../etc/passwd"):
        with pytest.raises(InputError, match="time zone"):
            audit_records([_csv(tmp_path, ["2025-03-04 08:00:00"])], time_zone=bad)


def test_explained_reasons_use_zoneinfo_for_the_spring_gap():
    # zoneinfo: 01:30 on 2025-03-30 does not exist in Europe/London.
    assert "skip this time" in explain_bad_time("2025-03-30 01:30:00", "Europe/London")
    assert "twice" in explain_bad_time("2025-10-26 01:30:00", "Europe/London")


@pytest.mark.parametrize("text", ["epoch", "infinity", "2025-03-04 (BC)", "2025/03/04", "2025-02-30", "4 March"])
def test_a_date_cell_outside_the_grammar_sets_its_row_aside(tmp_path, text):
    # duckdb's own date cast reads "epoch" as 1970-01-01, "infinity" and BC dates too.
    p = tmp_path / "d.csv"
    rows = [("A", "2025-03-04", t) for t in range(3)] + [("B", text, 0), ("B", text, 1)]
    p.write_text(
        "case_id,date,elapsed,agent,o2,air,dial\n"
        + "".join(f"{c},{d},{t},sevoflurane,0.5,0.5,2\n" for c, d, t in rows),
        encoding="utf-8",
    )
    r = audit_records([p])
    assert r.report.set_aside["bad_time"] == 2
    assert r.cases[["case_id", "month"]].values.tolist() == [["A", "2025-03"]]


def test_naive_parquet_times_are_read_in_the_time_zone_setting(tmp_path):
    import pyarrow as pa
    import pyarrow.parquet as pq

    walls = [t.astimezone(LONDON).replace(tzinfo=None) for t in SPRING]  # zoneinfo's wall clock
    n = len(walls)
    cols = {"case_id": ["A"] * n, "time": pa.array(walls, pa.timestamp("us")), "agent": ["sevoflurane"] * n}
    p = tmp_path / "naive.parquet"
    pq.write_table(pa.table(cols | {"o2": [0.5] * n, "air": [0.5] * n, "dial": [2.0] * n}), p)
    r = audit_records([p], time_zone="Europe/London")
    assert r.report.gaps == 0
    assert r.cases["minutes"].tolist() == [(SPRING[-1] - SPRING[0]).total_seconds() / 60]
    assert audit_records([p]).report.gaps == 1  # as written: the skipped hour is a gap
