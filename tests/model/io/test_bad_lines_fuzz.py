"""Fuzzing the line-level classes of bad input (issue 15): no traceback, no good line lost.

Classes: unclosed quotes, lone carriage returns, trailing, extra and missing fields, NUL
bytes and bytes that are not UTF-8, CR LF line endings and comment lines in record and
purchase CSV files; huge and tiny numbers in purchases, records and case mixes.

Invariants: each reader returns its result or raises ``InputError``; every good line is
used (totals equal those of the same file without its bad lines) and each bad line is set
aside under its own line number. The file-level classes are in ``test_fuzz_bad_files.py``.
"""

from __future__ import annotations

import csv
import math
from pathlib import Path

import numpy as np
import pytest
from fuzzing import FUZZ, SLOW, scratch  # noqa: F401  (scratch: fixture)
from hypothesis import given, settings
from hypothesis import strategies as st

from model.audit.engine import audit_records
from model.base.errors import InputError
from model.io import purchases
from model.io.csv_lines import split_csv_lines

ROOT = Path(__file__).resolve().parents[1]


# --- bad lines of a line-oriented CSV file ----------------------------------------------


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


def _lines_file(header: bytes, lines: list[bytes], crlf: bool, final_break: bool) -> bytes:
    br = b"\r\n" if crlf else b"\n"
    return header + br + br.join(lines) + (br if final_break else b"")


@FUZZ
@given(
    data=st.binary(max_size=400),
    extra=st.lists(
        st.sampled_from([b'"', b",", b"\r", b"\n", b"\r\n", b"a", b" ", b"#", b'""', b"\xef\xbb\xbf"]), max_size=40
    ),
)
def test_line_splitter_agrees_with_the_csv_module_on_every_clean_line(data, extra):
    raw = data + b"".join(extra)
    lines = split_csv_lines(raw)
    # Lines tile the file: starts ascend, each ends at or before its break.
    assert np.all(lines.starts <= lines.ends) and np.all(lines.ends <= lines.breaks)
    assert np.all(np.diff(lines.starts) > 0) if len(lines) > 1 else True
    for i in range(len(lines)):
        if lines.broken[i]:
            continue
        chunk = raw[lines.starts[i] : lines.ends[i]].decode("latin-1")
        # A clean, well-formed line is one record of that many fields (RFC 4180 grammar).
        expected = _rfc4180_fields(chunk)
        if expected is not None:
            assert expected == lines.fields[i], chunk
            assert max(len(next(csv.reader([chunk], strict=True), [])), 1) == expected, chunk


def _rfc4180_fields(line: str) -> int | None:
    """Fields of one line by the RFC 4180 grammar, or None when the line is not well formed.

    Source: RFC 4180 section 2 (a field is quoted as a whole, a quote inside it doubled).
    """
    fields, i, n = 1, 0, len(line)
    at_start = True
    while i < n:
        ch = line[i]
        if at_start and ch == '"':
            i += 1
            while True:
                if i >= n:
                    return None  # never closed
                if line[i] == '"':
                    if i + 1 < n and line[i + 1] == '"':
                        i += 2
                        continue
                    i += 1
                    break
                i += 1
            if i < n and line[i] != ",":
                return None  # text after a closing quote
            at_start = False
            continue
        if ch == '"':
            return None  # a quote inside an unquoted field
        if ch == ",":
            fields += 1
            at_start = True
        else:
            at_start = False
        i += 1
    return fields


# Good record lines: ten cases of six samples, sevoflurane at 2 %, different flows.
RECORD_HEADER = b"case_id,elapsed,theatre,agent,o2,air,n2o,dial"
RECORD_GOOD = [f"C{k},{t},Alder,sevoflurane,{0.5 + 0.1 * k:g},0.5,0,2" for k in range(10) for t in range(6)]


@pytest.fixture(scope="module")
def clean_record_totals(scratch):
    path = scratch / "clean_records.csv"
    path.write_bytes(_lines_file(RECORD_HEADER, [g.encode() for g in RECORD_GOOD], False, True))
    cases = audit_records([path], threads=1).cases
    return float(cases["liquid_agent_ml"].sum()), float(cases["minutes"].sum()), len(RECORD_GOOD)


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


PURCHASE_HEADER = b"month,item,quantity,unit,size"
PURCHASE_GOOD = [
    f"2025-{m:02d},{item},{q},{unit},{size}"
    for m in range(1, 13)
    for item, q, unit, size in (
        ("sevoflurane", m, "bottle", ""),
        ("desflurane", 1 + m % 3, "bottle", "240 mL"),
        ("nitrous_oxide", 2, "cylinder", "9000 L"),
        ("oxygen", 10 + m, "m**3", ""),
    )
]


def _bought(read):
    return read.table.groupby(["month", "item"])["amount"].sum().to_dict()


@pytest.fixture(scope="module")
def clean_purchases(scratch):
    path = scratch / "clean_purchases.csv"
    path.write_bytes(_lines_file(PURCHASE_HEADER, [g.encode() for g in PURCHASE_GOOD], False, True))
    return _bought(purchases.load_purchases(path))


@settings(FUZZ, max_examples=300)
@given(
    data=st.data(),
    crlf=st.booleans(),
    final_break=st.booleans(),
    comments=st.lists(st.sampled_from([b"# note", b"   # indented", b"\t#", b"", b"   "]), max_size=3),
)
def test_bad_purchase_lines_are_set_aside_alone_and_every_good_line_used(
    data, crlf, final_break, comments, scratch, clean_purchases
):
    lines = [g.encode() for g in PURCHASE_GOOD]
    for c in comments:
        lines.insert(data.draw(st.integers(0, len(lines))), c)
    n_bad = data.draw(st.integers(1, 5))
    bad_numbers = set()
    for _ in range(n_bad):
        pos = data.draw(st.integers(0, len(lines)))
        lines.insert(pos, data.draw(bad_line(PURCHASE_GOOD[pos % len(PURCHASE_GOOD)], 5)))
        bad_numbers = {n + 1 if n >= pos + 2 else n for n in bad_numbers} | {pos + 2}
    path = scratch / "fuzz_purchases.csv"
    path.write_bytes(_lines_file(PURCHASE_HEADER, lines, crlf, final_break))
    read = purchases.load_purchases(path)
    named = {int(str(e).split(":")[0].rsplit("line ", 1)[1]) for e in read.set_aside}
    assert named == bad_numbers
    assert _bought(read) == pytest.approx(clean_purchases, rel=1e-12)


# --- huge and tiny numbers -------------------------------------------------------------

_NUMBERS = st.one_of(
    st.sampled_from(
        [
            "1e306",
            "1e308",
            "1e309",
            "-1e308",
            "1e-320",
            "5e-324",
            "1e-400",
            "-0",
            "0",
            "1e9",
            "1e10",
            "9" * 400,
            "0." + "0" * 400 + "1",
            "1e+0999",
        ]
    ),
    st.floats(allow_nan=False, allow_infinity=False).map(repr),
    st.integers(-(10**30), 10**30).map(str),
)


@settings(FUZZ, max_examples=400)
@given(
    quantity=_NUMBERS,
    size=st.one_of(st.just(""), _NUMBERS.map(lambda n: f"{n} L")),
    item=st.sampled_from(["sevoflurane", "nitrous_oxide", "oxygen"]),
    unit=st.sampled_from(["bottle", "cylinder", "mL", "L", "kg", "m**3"]),
)
def test_huge_and_tiny_purchase_numbers_give_finite_amounts_or_set_aside(quantity, size, item, unit, scratch):
    path = scratch / "numbers.csv"
    path.write_bytes(PURCHASE_HEADER + f"\n2025-01,{item},{quantity},{unit},{size}\n".encode())
    read = purchases.load_purchases(path)
    assert len(read.table) + len(read.set_aside) == 1
    assert np.isfinite(read.table["amount"].astype(float)).all()
    assert (read.table["amount"] <= purchases.MAX_AMOUNT).all()
    if len(read.table):
        import pandas as pd

        from model.audit.reconcile import reconcile

        use = pd.DataFrame({"month": ["2025-01"], "item": [read.table["item"].iloc[0]], "recorded": [1e6]})
        numbers = reconcile(read.table, use).select_dtypes("number").to_numpy().ravel()
        assert not np.isinf(numbers).any()


@settings(SLOW, max_examples=30)
@given(cells=st.lists(_NUMBERS, min_size=4, max_size=4))
def test_huge_and_tiny_record_numbers_give_finite_totals(cells, scratch):
    o2, air, dial, elapsed = cells
    body = f"A,0,Alder,sevoflurane,1,1,0,2\nA,{elapsed},Alder,sevoflurane,{o2},{air},0,{dial}\nA,1e4,Alder,sevoflurane,1,1,0,2\n"
    path = scratch / "numbers_records.csv"
    path.write_bytes(RECORD_HEADER + b"\n" + body.encode())
    r = audit_records([path], threads=1)
    numbers = r.cases.select_dtypes("number").to_numpy(dtype=float).ravel()
    assert not np.isinf(numbers).any()  # NaN is an empty figure (e.g. a mean over 0 min)


@settings(FUZZ, max_examples=300)
@given(count=_NUMBERS, median=_NUMBERS, spread=_NUMBERS, weight=_NUMBERS)
def test_huge_and_tiny_case_mix_numbers_give_mix_or_input_error(count, median, spread, weight):
    from model.io.casemix import parse_casemix_text
    from model.io.plans import load_plan

    plan = load_plan(ROOT / "demo_data" / "plans" / "lap_chole_low_flow.toml")
    text = (
        "case_type,cases_per_year,median_duration,duration_spread,sevoflurane,weight,plan\n"
        f"t,{count},{median},{spread},1,{weight},p.toml\n"
    )
    try:
        mix = parse_casemix_text(text, "fuzz.csv", lambda name, where: plan)
    except InputError:
        return
    t = mix.types[0]
    assert all(math.isfinite(v) for v in (t.cases_per_year, t.median_min, t.spread, t.weight_kg))
