"""Fuzzed case-mix files (hypothesis): a case mix, or one InputError; never a traceback."""

from __future__ import annotations

import csv
import io
import math
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from model import load_plan
from model.base.errors import InputError
from model.io.casemix import CASEMIX_COLUMNS, parse_casemix_text
from model.year.inputs import CaseMix
from tests.helpers.fuzz import FUZZ

ROOT = Path(__file__).resolve().parents[3]


_NAMES = st.one_of(
    st.integers(250, 5000).map(lambda n: "n" * n),
    st.integers(1, 60).map(lambda n: "/".join(["d" * 250] * n)),
    st.sampled_from(
        [
            "a\x00b",
            "/proc/self/mem/x",
            "/dev/null",
            "/",
            ".",
            "..",
            "~nobody/x",
            "/root/../../etc/passwd/x",
            "\u202e.toml",
            "C:\\x\\y",
            "nonexistent/file",
        ]
    ),
    st.text(min_size=1, max_size=300),
)


@pytest.mark.slow
@settings(FUZZ, max_examples=400)
@given(name=_NAMES)
def test_case_mix_plan_cell_with_any_name_gives_input_error(name):
    from model.io.casemix import parse_casemix_text

    out = io.StringIO()
    csv.writer(out, lineterminator="\n").writerows(
        [["case_type", "cases_per_year", "median_duration", "sevoflurane", "plan"], ["t", "10", "90", "1", name]]
    )
    with pytest.raises(InputError):
        parse_casemix_text(out.getvalue(), str(ROOT / "demo_data" / "year" / "fuzz.csv"))


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


YEAR = ROOT / "demo_data" / "year"


DEMO_PLAN = load_plan(ROOT / "demo_data" / "plans" / "lap_chole_low_flow.toml")


# Derandomized under the ci Hypothesis profile (tests/conftest.py), so a CI run is repeatable.
PARSER_FUZZ = settings(
    max_examples=1500,
    deadline=None,
    suppress_health_check=[
        HealthCheck.too_slow,
        HealthCheck.data_too_large,
        HealthCheck.filter_too_much,
        HealthCheck.function_scoped_fixture,
    ],
)


STRUCTURED = settings(PARSER_FUZZ, max_examples=400)


def _only_input_error(call, *args, **kwargs):
    try:
        return call(*args, **kwargs)
    except InputError as exc:
        assert str(exc).strip()
        return None


_cells = st.one_of(
    st.text(alphabet=st.characters(blacklist_categories=("Cs",), blacklist_characters="\x00"), max_size=15),
    st.integers(-(10**20), 10**20).map(str),
    st.floats(allow_nan=True, allow_infinity=True).map(repr),
    st.sampled_from(
        [
            "",
            " ",
            "nan",
            "NaN",
            "inf",
            "-1",
            "0",
            "1e308",
            "1e-320",
            "0,5",
            "1.5.2",
            "2 L/min",
            "500 mL/min",
            "9**9**9",
            "10**400",
            "9^9^9",
            "m**3",
            "75 min",
            "1.5 h",
            "30 %",
            "120%",
            "sevo",
            "Sevoflurane",
            "N2O",
            "xenon",
            "none",
            "2025-13",
            "2025-02",
            "2025-02-30T25:61",
            "=SUM(A1:A9)",
            "+1",
            "@x",
            '"',
            '""',
            "'",
            "\t",
            "a,b",
            "\u202e",
            "é",
            "𝟙",
            "1_000",
            "0x1F",
            "½",
        ]
    ),
)


def _csv_line(cells) -> str:
    out = []
    for cell in cells:
        if any(ch in cell for ch in ',"\n\r'):
            cell = '"' + cell.replace('"', '""') + '"'
        out.append(cell)
    return ",".join(out)


def _table(columns_pool):
    """CSV text: a header from the pool (plus strangers) and rows of random cells."""
    return st.builds(
        lambda header, rows, raw_quote: "\n".join(
            [_csv_line(header)] + [_csv_line(r) if not raw_quote else ",".join(r) for r in rows]
        ),
        st.lists(
            st.one_of(st.sampled_from(columns_pool), st.text(max_size=8)), min_size=0, max_size=len(columns_pool) + 2
        ),
        st.lists(st.lists(_cells, max_size=len(columns_pool) + 2), max_size=5),
        st.booleans(),
    )


def _mangled(text: str):
    """The demo text with one line replaced, deleted, doubled or garbled."""
    lines = text.splitlines()

    @st.composite
    def build(draw):
        out = list(lines)
        i = draw(st.integers(0, len(out) - 1))
        how = draw(st.sampled_from(["cells", "delete", "duplicate", "garble", "truncate"]))
        if how == "cells":
            n = max(1, out[i].count(",") + 1)
            out[i] = _csv_line(draw(st.lists(_cells, min_size=n - 1, max_size=n + 1)))
        elif how == "delete":
            del out[i]
        elif how == "duplicate":
            out.insert(i, out[i])
        elif how == "garble":
            pos = draw(st.integers(0, len(out[i])))
            out[i] = out[i][:pos] + draw(st.text(max_size=4)) + out[i][pos:]
        else:
            out = out[: i + 1]
            out[i] = out[i][: draw(st.integers(0, len(out[i])))]
        return "\n".join(out) + "\n"

    return build()


CASEMIX_TEXT = (YEAR / "fernhollow_casemix.csv").read_text()


def _plan_for(name, where):
    if name.startswith("plans/"):
        return DEMO_PLAN
    raise InputError(where, name, "no such plan (fuzz)")


def _casemix(text):
    result = _only_input_error(parse_casemix_text, text, "fuzz.csv", _plan_for)
    if result is not None:
        assert isinstance(result, CaseMix) and result.types
        assert all(t.cases_per_year >= 0 and t.median_min > 0 for t in result.types)
    return result


@STRUCTURED
@given(_table(list(CASEMIX_COLUMNS)))
def test_casemix_with_wrong_columns_and_cells_gives_mix_or_input_error(text):
    _casemix(text)


@STRUCTURED
@given(_mangled(CASEMIX_TEXT))
def test_demo_casemix_with_one_line_mangled_gives_mix_or_input_error(text):
    _casemix(text)


@PARSER_FUZZ
@given(st.binary(max_size=2000))
def test_casemix_from_raw_bytes_gives_mix_or_input_error(data):
    _casemix(data.decode("utf-8", errors="replace"))


@PARSER_FUZZ
@given(st.text(alphabet=st.sampled_from(list(',"\n\r #abcdeilnmoprstuv0123456789.-%/')), max_size=300))
def test_casemix_from_csv_like_text_gives_mix_or_input_error(text):
    _casemix(CASEMIX_TEXT.splitlines()[5] + "\n" + text)
