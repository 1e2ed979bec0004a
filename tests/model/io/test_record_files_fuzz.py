"""Fuzzed record files (hypothesis): a report, or one InputError naming the file and line; never a traceback."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from model.audit.engine import audit_records
from model.base.errors import InputError
from model.io import record_files, records
from tests.helpers.fuzz import SLOW
from tests.helpers.parser_fuzz import (
    _NUMBERS,
    NEAR_CHANGES,
    PARSER_FUZZ,
    ZONES,
    _lines_file,
    _mangled,
    _only_input_error,
    _table,
    _write,
    known_record_sets,
    no_nan_or_inf,
)

ROOT = Path(__file__).resolve().parents[3]


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


@pytest.mark.slow
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


@pytest.mark.slow
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


@st.composite
def bad_line(draw, good: str, n_fields: int):
    """A line that must be set aside: built from a good line by one of the classes."""
    how = draw(
        st.sampled_from(["unclosed_quote", "lone_cr", "cr_ending", "trailing", "extra", "missing", "nul", "not_utf8"])
    )
    cells = good.split(",")
    i = draw(st.integers(0, n_fields - 1))
    if how == "unclosed_quote":
        cells[i] = '"' + cells[i] + draw(st.sampled_from(["", ",x", '""', "x"]))
        text = ",".join(cells)
    elif how == "lone_cr":
        pos = draw(st.integers(0, len(cells[i])))
        cells[i] = cells[i][:pos] + "\r" + cells[i][pos:]
        text = ",".join(cells)
        if text.endswith("\r"):
            text += "x"  # a CR at the end is the CR of a CR LF line break
    elif how == "cr_ending":
        text = good + "\r" + draw(st.sampled_from([good, "x,y"]))  # "good\r" alone is CR LF
    elif how == "trailing":
        text = good + "," * draw(st.integers(1, 6))
    elif how == "extra":
        text = good + "," + draw(st.sampled_from(["x", '"a,b"', "1", " "]))
    elif how == "missing":
        del cells[i]
        text = ",".join(cells)
    elif how == "nul":
        text = good[:i] + "\x00" + good[i:]
    else:
        return good.encode()[:3] + b"\xff\xfe" + good.encode()[3:]
    return text.encode("utf-8")


# Good record lines: ten cases of six samples, sevoflurane at 2 %, different flows.
RECORD_HEADER = b"case_id,elapsed,theatre,agent,o2,air,n2o,dial"


RECORD_GOOD = [f"C{k},{t},Alder,sevoflurane,{0.5 + 0.1 * k:g},0.5,0,2" for k in range(10) for t in range(6)]


@pytest.fixture(scope="module")
def clean_record_totals(scratch):
    path = scratch / "clean_records.csv"
    path.write_bytes(_lines_file(RECORD_HEADER, [g.encode() for g in RECORD_GOOD], False, True))
    cases = audit_records([path], threads=1).cases
    return float(cases["liquid_agent_ml"].sum()), float(cases["minutes"].sum()), len(RECORD_GOOD)


@pytest.mark.slow
@settings(SLOW, max_examples=60)
@given(data=st.data(), crlf=st.booleans(), final_break=st.booleans())
def test_bad_record_lines_are_set_aside_alone_and_every_good_line_used(
    data, crlf, final_break, scratch, clean_record_totals
):
    n_bad = data.draw(st.integers(1, 4))
    lines = [g.encode() for g in RECORD_GOOD]
    where = sorted(data.draw(st.lists(st.integers(0, len(lines)), min_size=n_bad, max_size=n_bad)))
    for k, pos in enumerate(where):
        lines.insert(pos + k, data.draw(bad_line(RECORD_GOOD[pos % len(RECORD_GOOD)], 8)))
    bad_numbers = {pos + k + 2 for k, pos in enumerate(where)}  # header is line 1
    path = scratch / "fuzz_records.csv"
    path.write_bytes(_lines_file(RECORD_HEADER, lines, crlf, final_break))
    r = audit_records([path], threads=1)
    liquid, minutes, n_good = clean_record_totals
    assert r.report.rows_valid == n_good
    assert set(r.report.issues["row"]) == bad_numbers
    assert not r.report.notes
    assert float(r.cases["liquid_agent_ml"].sum()) == pytest.approx(liquid, rel=1e-12)
    assert float(r.cases["minutes"].sum()) == pytest.approx(minutes, rel=1e-12)


@pytest.mark.slow
@settings(SLOW, max_examples=30)
@given(cells=st.lists(_NUMBERS, min_size=4, max_size=4))
def test_huge_and_tiny_record_numbers_give_finite_totals(cells, scratch):
    o2, air, dial, elapsed = cells
    body = (
        "A,0,Alder,sevoflurane,1,1,0,2\n"
        f"A,{elapsed},Alder,sevoflurane,{o2},{air},0,{dial}\n"
        "A,1e4,Alder,sevoflurane,1,1,0,2\n"
    )
    path = scratch / "numbers_records.csv"
    path.write_bytes(RECORD_HEADER + b"\n" + body.encode())
    r = audit_records([path], threads=1)
    numbers = r.cases.select_dtypes("number").to_numpy(dtype=float).ravel()
    assert not np.isinf(numbers).any()  # NaN is an empty figure (e.g. a mean over 0 min)


RECORDS = ROOT / "demo_data" / "records"


# Each example reads a file through duckdb: kept small so the file stays well under a minute.
DUCKDB = settings(PARSER_FUZZ, max_examples=60)


RECORD_COLUMNS = sorted({alias for _, aliases in record_files.FIELDS.values() for alias in aliases})


RECORD_TEXT = "\n".join((RECORDS / "fernhollow_birch_cases.csv").read_text().splitlines()[:40]) + "\n"


def _read_records(path):
    result = _only_input_error(records.read_records, [str(path)], threads=1)
    if result is not None:
        report = result.report
        result.con.close()
        return report
    return None


@st.composite
def _column_names(draw):
    name = draw(st.one_of(st.sampled_from(RECORD_COLUMNS), st.text(max_size=10)))
    unit = draw(
        st.one_of(
            st.just(""),
            st.sampled_from(
                [
                    "L/min",
                    "mL/min",
                    "%",
                    "fraction",
                    "min",
                    "s",
                    "h",
                    "kg",
                    "9**9**9",
                    "m**3",
                    "10**400",
                    "L/min/min",
                    "furlong",
                    "",
                    "pct",
                    "1",
                ]
            ),
            st.text(max_size=8),
        )
    )
    brackets = draw(st.sampled_from(["[]", "()"]))
    return f"{name} {brackets[0]}{unit}{brackets[1]}" if unit else name


@pytest.mark.slow
@settings(PARSER_FUZZ, max_examples=800)
@given(
    names=st.lists(_column_names(), max_size=12),
    units_line=st.lists(
        st.tuples(st.sampled_from(RECORD_COLUMNS + ["x"]), st.sampled_from(["mL/min", "%", "9**9**9", "h", "", "zz"])),
        max_size=4,
    ),
)
def test_record_header_gives_columns_or_input_error(names, units_line):
    declared = {k: v for k, v in units_line}
    result = _only_input_error(record_files.map_columns, names, declared, "fuzz.csv")
    if result is not None:
        columns, ignored = result
        assert all(c.factor > 0 for c in columns.values() if c.factor)


@PARSER_FUZZ
@given(line=st.text(max_size=80))
def test_record_units_line_gives_units_or_input_error(line):
    result = _only_input_error(record_files._parse_units_line, "# units: " + line, "fuzz.csv, line 1")
    assert result is None or isinstance(result, dict)


@settings(PARSER_FUZZ, max_examples=500)
@given(data=st.binary(max_size=1500))
def test_record_file_header_from_raw_bytes_gives_columns_or_input_error(data, scratch):
    path = _write(scratch, "inspect.csv", data)
    _only_input_error(record_files.inspect_file, path)


@pytest.mark.slow
@DUCKDB
@given(text=_mangled(RECORD_TEXT))
def test_demo_records_with_one_line_mangled_give_report_or_input_error(text, scratch):
    _read_records(_write(scratch, "mangled.csv", text.encode()))


@DUCKDB
@given(text=_table(RECORD_COLUMNS[:12] + ["case_id", "elapsed", "agent", "o2", "air", "dial"]))
def test_record_table_with_wrong_cells_gives_report_or_input_error(text, scratch):
    _read_records(_write(scratch, "table.csv", text.encode()))


@pytest.mark.slow
@DUCKDB
@given(data=st.binary(min_size=1, max_size=1500))
def test_record_file_from_raw_bytes_gives_report_or_input_error(data, scratch):
    header = b"case_id,elapsed,agent,o2,air,dial\n"
    _read_records(_write(scratch, "raw.csv", header + data))


@settings(DUCKDB, max_examples=30)
@given(data=st.binary(min_size=1, max_size=600))
def test_damaged_parquet_records_give_report_or_input_error(data, scratch):
    good = (RECORDS / "fernhollow_2025.parquet").read_bytes()
    assume(len(good) > 64)
    cut = len(data) % (len(good) - 8) + 4
    damaged = good[:cut] + data + good[cut + len(data) :]
    _read_records(_write(scratch, "damaged.parquet", damaged[: len(good)]))


def test_found_record_header_with_a_lone_carriage_return_is_an_input_error(scratch):
    assert _only_input_error(record_files.inspect_file, _write(scratch, "cr.csv", b"\r\x01")) is None


def test_found_record_line_with_nul_before_carriage_return_is_set_aside_alone(scratch):
    data = b"case_id,elapsed,agent,o2,air,dial\n\x00\rA,0,sevo,1,1,2\nA,1,sevo,1,1,2\n"
    report = _read_records(_write(scratch, "nul.csv", data))
    assert report.issues[["row", "kind"]].values.tolist() == [[2, "unreadable"]]


def test_found_power_in_a_record_unit_is_refused_without_evaluating_it(scratch):
    data = b"case_id,elapsed,agent,o2 [L/min**9**9**9],air,dial\nA,0,sevo,1,1,2\n"
    assert _only_input_error(record_files.inspect_file, _write(scratch, "pow.csv", data)) is None


@pytest.mark.slow
@settings(SLOW, max_examples=40)
@given(case=known_record_sets())
def test_odd_record_sets_give_the_plain_sums_of_their_good_rows(case, scratch, tmp_path_factory):
    """Odd record sets: totals equal a plain-Python sum over the rows generated; no nan or inf.

    Classes: times in zones and across clock changes, 12-hour times, trailing text, digit
    separators, unnamed and repeated columns, case ids reused in other files.
    """
    import json

    folder = tmp_path_factory.mktemp("known", numbered=True)
    paths = [_write(folder, name, text.encode()) for name, text in case["files"]]
    r = audit_records(paths, time_zone=case["time_zone"], gap_limit_min=600.0, threads=1)
    assert r.report.rows_set_aside == case["bad"], r.report.issues["message"].tolist()
    assert r.report.rows_valid + case["bad"] == r.report.rows_read
    assert len(r.cases) == case["cases"]
    for col in ("minutes", "oxygen_l", "air_l"):
        assert float(r.cases[col].sum()) == pytest.approx(case[col], rel=1e-12, abs=1e-9), col
    out = r.to_dict()
    assert no_nan_or_inf(out)
    json.dumps(out, allow_nan=False)  # raises on any nan or inf left in the output


@settings(SLOW, max_examples=40)
@given(
    tails=st.lists(
        st.one_of(
            st.text(alphabet=st.characters(blacklist_categories=("Cs", "Cc"), blacklist_characters=',"'), max_size=6),
            st.sampled_from([" ", "  ", " PM", "Z", "+01:00", " UTC", " GMT", "+14:01", "-12:00", "0", ".5", ":00"]),
        ),
        min_size=1,
        max_size=12,
    )
)
def test_text_after_a_complete_time_is_accepted_only_when_it_is_spaces(tails, scratch):
    # After seconds and an offset the documented grammar (docs/formats.md) allows nothing but spaces.
    base = [f"2025-03-04 08:{k:02d}:00+01:00" for k in range(len(tails) + 1)]
    cells = [base[0]] + [b + tail for b, tail in zip(base[1:], tails, strict=True)]
    text = "case_id,time,agent,o2,air,dial\n" + "".join(f"A,{c},sevoflurane,0.5,0.5,2\n" for c in cells)
    r = audit_records([_write(scratch, "tails.csv", text.encode())], gap_limit_min=600.0, threads=1)
    bad = {k + 3 for k, tail in enumerate(tails) if tail.strip(" ")}  # header is line 1, the first cell line 2
    assert set(r.report.issues["row"]) == bad
    assert set(r.report.issues["kind"]) <= {"bad_time"}
    good = [0] + [k + 1 for k, tail in enumerate(tails) if not tail.strip(" ")]
    assert r.cases["minutes"].tolist() == [float(good[-1] - good[0])]


@settings(SLOW, max_examples=30)
@given(
    zone=st.sampled_from(ZONES),
    start=st.sampled_from(NEAR_CHANGES),
    steps=st.lists(st.integers(1, 40), min_size=1, max_size=30),
    unit=st.sampled_from(["s", "ms", "us", "ns"]),
)
def test_parquet_times_stored_with_a_zone_give_zoneinfos_minutes_and_month(zone, start, steps, unit, scratch):
    import datetime as dt
    import zoneinfo

    import pyarrow as pa
    import pyarrow.parquet as pq

    first = dt.datetime.fromisoformat(start).replace(tzinfo=dt.UTC)
    instants = [first + dt.timedelta(minutes=sum(steps[:k])) for k in range(len(steps) + 1)]
    n = len(instants)
    times = pa.array(instants, pa.timestamp("us", tz="UTC")).cast(pa.timestamp(unit, tz=zone))
    table = pa.table(
        {"case_id": ["A"] * n, "time": times, "agent": ["sevoflurane"] * n, "o2": [1.0] * n, "dial": [2.0] * n}
    )
    path = scratch / "zoned.parquet"
    pq.write_table(table, path)
    r = audit_records([path], gap_limit_min=600.0, threads=1)
    local = first.astimezone(zoneinfo.ZoneInfo(zone))  # the zoneinfo database: the stored zone's calendar
    assert r.cases["minutes"].tolist() == [float(sum(steps))]
    assert r.cases["month"].tolist() == [local.strftime("%Y-%m")]
    assert str(r.cases["start"].iloc[0]) == local.strftime("%Y-%m-%d %H:%M:%S")
