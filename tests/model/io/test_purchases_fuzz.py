"""Fuzzed purchase files (hypothesis): rows, or one InputError; each bad line set aside alone, every good line used."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from model.io import purchases
from tests.helpers.fuzz import FUZZ, cell_runs_as_formula, formula_cells
from tests.helpers.parser_fuzz import (
    _NUMBERS,
    PARSER_FUZZ,
    STRUCTURED,
    _lines_file,
    _mangled,
    _only_input_error,
    _table,
    _write,
    known_purchase_files,
    no_nan_or_inf,
)

ROOT = Path(__file__).resolve().parents[3]


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


@pytest.mark.slow
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


@pytest.mark.slow
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


RECORDS = ROOT / "demo_data" / "records"


PURCHASE_TEXT = (RECORDS / "fernhollow_purchases_2025.csv").read_text()


def _read_purchases(path):
    read = _only_input_error(purchases.load_purchases, path)
    if read is None:
        return None
    result = read.table
    assert set(result.columns) >= {"month", "item", "amount", "unit"}
    assert (result["amount"] >= 0).all()
    if purchases.SITE_COLUMN in result.columns:  # the optional site: a short printable name or blank
        sites = result[purchases.SITE_COLUMN]
        assert all(
            isinstance(v, str) and v == v.strip() and v.isprintable() and len(v) <= purchases.MAX_SITE_CHARS
            for v in sites
        )
    # Each line set aside is named by its file and line.
    assert all(m.startswith(f"{path}, ") and m.strip() for m in read.messages)
    return result


@STRUCTURED
@given(text=_table([*purchases.PURCHASE_COLUMNS, purchases.SITE_COLUMN]))
def test_purchase_table_with_wrong_cells_gives_rows_or_input_error(text, scratch):
    _read_purchases(_write(scratch, "table.csv", text.encode()))


@pytest.mark.slow
@STRUCTURED
@given(text=_mangled(PURCHASE_TEXT))
def test_demo_purchases_with_one_line_mangled_give_rows_or_input_error(text, scratch):
    _read_purchases(_write(scratch, "mangled.csv", text.encode()))


@pytest.mark.slow
@settings(PARSER_FUZZ, max_examples=800)
@given(data=st.binary(max_size=1500))
def test_purchases_from_raw_bytes_give_rows_or_input_error(data, scratch):
    _read_purchases(_write(scratch, "raw.csv", b"month,item,quantity,unit,size\n" + data))


@settings(PARSER_FUZZ, max_examples=300)
@given(
    unit=st.sampled_from(
        [
            "bottle",
            "mL",
            "L",
            "m**3",
            "kg",
            "cylinder",
            "9**9**9",
            "9^9^9",
            "10**400",
            "L**9**9",
            "((9**9)**9)**9 L",
            "furlong",
            "",
        ]
    ),
    size=st.sampled_from(["", "250 mL", "9000 L", "9**9**9 L", "10**400 L", "-1 L", "x"]),
    item=st.sampled_from(["sevoflurane", "nitrous_oxide", "oxygen", "air", "xenon"]),
    quantity=st.sampled_from(["1", "0", "-1", "1e308", "nan", "inf", "x"]),
)
def test_purchase_units_and_sizes_give_rows_or_input_error(unit, size, item, quantity, scratch):
    text = f"month,item,quantity,unit,size\n2025-01,{item},{quantity},{unit},{size}\n"
    _read_purchases(_write(scratch, "units.csv", text.encode()))


def test_found_power_in_a_purchase_unit_is_refused_without_evaluating_it(scratch):
    for name, line, column in (
        ("pow.csv", b"2025-01,oxygen,2,cylinder,9**9**9 L", "size"),
        ("pow2.csv", b"2025-01,oxygen,2,L**9**9,", "unit"),
    ):
        read = purchases.load_purchases(_write(scratch, name, b"month,item,quantity,unit,size\n" + line + b"\n"))
        assert read.table.empty
        assert len(read.messages) == 1 and f"line 2: {column}" in read.messages[0]


@settings(FUZZ, max_examples=80)
@given(st.lists(formula_cells(), min_size=1, max_size=4))
def test_purchases_written_with_formula_sites_never_hold_a_running_cell_and_read_back(tmp_path_factory, sites):
    import csv

    rows = [("2025-01", "sevoflurane", 1, "bottle", "", site) for site in sites]
    path = purchases.write_purchases(rows, tmp_path_factory.mktemp("w") / "p.csv", with_site=True)
    text = path.read_text(encoding="utf-8")
    import io

    for row in list(csv.reader(io.StringIO(text, newline="")))[1:]:  # csv splits at CR and LF only
        for cell in row:
            assert not cell_runs_as_formula(cell), cell
    read = purchases.load_purchases(path)  # a site that is not a valid name is set aside, never a traceback
    kept = [s.strip() for s in sites if s.strip().isprintable() and "\n" not in s and "\r" not in s]
    assert set(read.table["site"]) <= {s for s in kept} | {""}


@settings(FUZZ, max_examples=200)
@given(case=known_purchase_files())
def test_odd_purchase_headers_are_refused_in_one_line_or_give_the_plain_sum_of_their_good_lines(case, scratch):
    """A column named twice or unnamed refuses the file in one line; a trailing empty one is ignored.

    The amount of an accepted file equals the plain sum of its good lines' bottles.
    """
    from model.base.errors import InputError
    from model.reference import DEFAULT_REFERENCE

    text, expected = case
    path = _write(scratch, "odd.csv", text.encode())
    if expected is None:
        with pytest.raises(InputError) as err:
            purchases.load_purchases(path)
        assert "\n" not in str(err.value) and "header" in str(err.value)
        return
    bottles, bad = expected
    read = purchases.load_purchases(path)
    assert len(read.set_aside) == bad, read.messages
    volume = DEFAULT_REFERENCE.agents["sevoflurane"].bottle_volume  # mL a bottle (model.reference)
    assert float(read.table["amount"].sum()) == pytest.approx(bottles * volume)
    assert no_nan_or_inf(read.table.to_dict("records"))
