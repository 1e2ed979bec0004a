"""Property tests: files with broken lines of every kind lose no valid row and name each bad line."""

from __future__ import annotations

import tempfile
from pathlib import Path

import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from model.audit.engine import audit_records

HEADER = "case_id,elapsed,theatre,agent,o2,air,n2o,dial"
AGENTS = ("sevoflurane", "desflurane", "isoflurane", "Sevo", "ISO")
ROW_KINDS = ("text_in_number", "unknown_agent", "negative_flow", "absurd_flow", "absurd_setting", "missing_value")
TIME_KINDS = ("duplicate_time", "time_backwards")
CSV_KINDS = ("field_count", "encoding")


@st.composite
def clean_cases(draw):
    """Cases with strictly increasing times (steps of 0.5-3 min, under the gap limit)."""
    rows = []
    for c in range(draw(st.integers(1, 4))):
        n = draw(st.integers(2, 12))
        steps = draw(st.lists(st.sampled_from([0.5, 1.0, 2.0, 3.0]), min_size=n, max_size=n))
        agent = draw(st.sampled_from(AGENTS))
        t = draw(st.sampled_from([0.0, 5.0, 100.5]))
        for s in steps:
            o2 = draw(st.sampled_from([0.3, 0.5, 1.0, 2.0, 6.0]))
            air = draw(st.sampled_from([0.0, 0.5, 1.0]))
            dial = draw(st.sampled_from([0.5, 1.0, 2.0]))
            rows.append((f"C{c}", t, "Hazel", agent, o2, air, 0.0, dial))
            t += s
    return rows


def _line(r) -> bytes:
    return ",".join(str(v) for v in r).encode()


def _bad_row(kind, case="Z", t=1.0) -> bytes:
    good = [case, t, "Hazel", "sevoflurane", 1.0, 0.5, 0.0, 2.0]
    if kind == "text_in_number":
        good[4] = "one"
    elif kind == "unknown_agent":
        good[3] = "xenon"
    elif kind == "negative_flow":
        good[5] = -0.5
    elif kind == "absurd_flow":
        good[4] = 45.0
    elif kind == "absurd_setting":
        good[7] = 30.0
    elif kind == "missing_value":
        good[0] = ""
    elif kind == "field_count":
        return _line(good) + b",surplus"
    elif kind == "encoding":
        return _line(good).replace(b"Hazel", b"Haz\xe9l")
    return _line(good)


@st.composite
def broken_files(draw):
    clean = draw(clean_cases())
    kinds = draw(st.lists(st.sampled_from(ROW_KINDS + TIME_KINDS + CSV_KINDS), max_size=8))
    inserts = []  # (after clean index, bytes, kind)
    for kind in kinds:
        p = draw(st.integers(0, len(clean) - 1))
        case, t = clean[p][0], clean[p][1]
        if kind == "duplicate_time":
            line = _line(clean[p][:1] + (t,) + clean[p][2:])
        elif kind == "time_backwards":
            line = _line(clean[p][:1] + (t - 0.25,) + clean[p][2:])
        else:
            line = _bad_row(kind, draw(st.sampled_from([case, "Z"])), draw(st.sampled_from([t, t + 0.1])))
        inserts.append((p, line, kind))
    lines, expected = [HEADER.encode()], {}
    for i, r in enumerate(clean):
        lines.append(_line(r))
        for p, line, kind in inserts:
            if p == i:
                lines.append(line)
                expected[len(lines)] = kind
    return clean, b"\n".join(lines) + b"\n", expected


@pytest.mark.slow
@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(broken_files())
def test_broken_lines_are_reported_by_line_and_no_valid_row_is_lost(case):
    clean, data, expected = case
    with tempfile.TemporaryDirectory() as tmp:
        broken = Path(tmp) / "broken.csv"
        broken.write_bytes(data)
        good = Path(tmp) / "good.csv"
        good.write_bytes(b"\n".join([HEADER.encode()] + [_line(r) for r in clean]) + b"\n")
        r = audit_records([broken])
        ref = audit_records([good])
    issues = r.report.issues
    assert dict(zip(issues["row"].astype(int), issues["kind"], strict=True)) == expected
    for row, msg in zip(issues["row"], issues["message"], strict=True):
        assert msg.startswith(f"{broken}: line {row}: ")
    assert r.report.rows_valid == len(clean)
    assert r.report.rows_set_aside == len(expected)
    assert r.report.rows_read == len(clean) + len(expected)
    cols = ["case_id", "agent", "samples", "minutes", "oxygen_l", "air_l", "liquid_agent_ml", "co2e_total_kg"]
    pd.testing.assert_frame_equal(r.cases[cols], ref.cases[cols])


@settings(max_examples=15, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(clean_cases(), st.lists(st.sampled_from(("negative_flow", "absurd_setting", "unknown_agent")), max_size=4))
def test_parquet_rows_set_aside_are_numbered_and_the_rest_all_used(clean, kinds):
    df = pd.DataFrame(clean, columns=HEADER.split(","))
    bad = (
        pd.DataFrame(
            [[f.decode() if isinstance(f, bytes) else f for f in _bad_row(k).decode().split(",")] for k in kinds],
            columns=HEADER.split(","),
        ).astype(df.dtypes.to_dict())
        if kinds
        else df.iloc[:0]
    )
    whole = pd.concat([bad, df], ignore_index=True)
    with tempfile.TemporaryDirectory() as tmp:
        p = Path(tmp) / "r.parquet"
        whole.to_parquet(p)
        r = audit_records([p])
    assert dict(zip(r.report.issues["row"].astype(int), r.report.issues["kind"], strict=True)) == {
        i + 1: k for i, k in enumerate(kinds)
    }
    assert r.report.rows_valid == len(clean)
    assert int(r.cases["samples"].sum()) == len(clean)


@pytest.mark.parametrize("kind", ROW_KINDS + CSV_KINDS)
def test_each_bad_line_kind_is_recognised_on_its_own(tmp_path, kind):
    p = tmp_path / "one.csv"
    p.write_bytes(
        HEADER.encode()
        + b"\n"
        + _line(("A", 0.0, "Hazel", "sevoflurane", 1.0, 0.0, 0.0, 1.0))
        + b"\n"
        + _bad_row(kind)
        + b"\n"
    )
    r = audit_records([p])
    assert r.report.issues["kind"].tolist() == [kind]
    assert r.report.issues["row"].tolist() == [3]
    assert r.report.rows_valid == 1
