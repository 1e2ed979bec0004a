"""``gas-ledger audit`` on unusual record files and flags: read in their units, or exit 2 naming what is wrong."""

import json
import re
from pathlib import Path

import pytest

from tests.helpers.cli import assert_one_line_error, run

ROOT = Path(__file__).resolve().parents[3]


BIRCH = ROOT / "demo_data" / "records" / "fernhollow_birch_cases.csv"


@pytest.mark.parametrize("size", ["abc", "0", "1e99GB"])
def test_audit_bad_memory_limit_exits_2_naming_the_flag(size, capsys):
    status, _, err = run(["audit", BIRCH, f"--memory-limit={size}"], capsys)
    assert_one_line_error(status, err, "--memory-limit", repr(size))


def test_audit_json_of_elapsed_records_without_date_parses(tmp_path, capsys):
    records = tmp_path / "r.csv"
    records.write_text(
        "case_id,elapsed,agent,o2,air,dial\nA,0,sevoflurane,1,1,2\nA,4,sevoflurane,1,1,2\nA,5,sevoflurane,1,1,2\n",
        encoding="utf-8",
    )
    status, out, err = run(["audit", records, "--json"], capsys)
    assert status == 0, err
    data = json.loads(out, parse_constant=lambda c: pytest.fail(f"{c} in JSON"))
    assert data["cases"][0]["start"] is None
    # Dion's formula, liquid mL = FGF x dial % x minutes / mL of vapour per mL of liquid;
    # 2 L/min x 2 % x 5 min = 0.2 L of vapour, about 184 mL of vapour per mL of sevoflurane
    # at 20 °C (common practice, no source) -> about 1.09 mL
    assert data["total"]["liquid_agent_ml"] == pytest.approx(0.2 / 0.184, rel=0.02)


@pytest.mark.parametrize("unit, per_second", [("s", 1), ("ms", 10**3), ("us", 10**6), ("ns", 10**9)])
def test_audit_parquet_elapsed_duration_is_read_in_its_unit(unit, per_second, tmp_path, capsys):
    import pyarrow as pa
    import pyarrow.parquet as pq

    path = tmp_path / "r.parquet"
    pq.write_table(
        pa.table(
            {
                "case_id": ["A", "A"],
                "agent": ["sevoflurane"] * 2,
                "elapsed": pa.array([0, 240 * per_second], type=pa.duration(unit)),
                "o2": [1.0, 1.0],
                "air": [1.0, 1.0],
                "dial": [2.0, 2.0],
            }
        ),
        path,
    )
    status, out, err = run(["audit", path, "--json"], capsys)
    assert status == 0, err
    data = json.loads(out)
    # 240 s between the samples is 4 min counted, no gap (arithmetic)
    assert data["total"]["minutes"] == pytest.approx(4.0)
    assert data["report"]["gaps"] == 0


def test_audit_table_of_a_single_sample_case_prints_no_nan(tmp_path, capsys):
    records = tmp_path / "r.csv"
    records.write_text("case_id,elapsed,agent,o2,air,dial\nA,0,sevoflurane,1,1,2\n", encoding="utf-8")
    status, out, err = run(["audit", records], capsys)
    assert status == 0, err
    assert "Cases                      1" in out
    assert re.search(r"\bnan\b", out, re.IGNORECASE) is None, out


def test_audit_units_line_giving_a_column_twice_exits_2(tmp_path, capsys):
    records = tmp_path / "r.csv"
    records.write_text(
        "# units: o2=mL/min, o2=L/min\ncase_id,elapsed,agent,o2,air,dial\n"
        "A,0,sevoflurane,1,1,2\nA,4,sevoflurane,1,1,2\n",
        encoding="utf-8",
    )
    status, _, err = run(["audit", records], capsys)
    assert_one_line_error(status, err, "r.csv, line 1", "o2=L/min", "given twice")


@pytest.mark.parametrize("command", ["audit", "report"])
def test_an_unknown_time_zone_exits_2_in_one_line(command, tmp_path, capsys):
    p = tmp_path / "r.csv"
    p.write_text("case_id,time,agent,o2,dial\nA,2025-03-04 08:00:00,sevoflurane,1,2\n", encoding="utf-8")
    extra = ["--period", "2025"] if command == "report" else []
    status, _, err = run([command, p, *extra, "--time-zone", "Mars/Base"], capsys)
    assert_one_line_error(status, err, "time zone", "Mars/Base")


def test_audit_reads_times_without_offset_in_the_time_zone_given(tmp_path, capsys):
    # Europe/London, zoneinfo: 00:59 GMT then 02:00 BST on 2025-03-30 are one minute apart.
    p = tmp_path / "r.csv"
    p.write_text(
        "case_id,time,agent,o2,dial\nA,2025-03-30 00:59:00,sevoflurane,1,2\nA,2025-03-30 02:00:00,sevoflurane,1,2\n",
        encoding="utf-8",
    )
    status, out, _ = run(["audit", p, "--json", "--time-zone", "Europe/London"], capsys)
    assert status == 0
    assert json.loads(out)["cases"][0]["minutes"] == 1.0
