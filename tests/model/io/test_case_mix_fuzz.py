"""Fuzzed case-mix files (hypothesis): a case mix, or one InputError; never a traceback."""

from __future__ import annotations

import csv
import io
import math
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from model import load_plan
from model.base.errors import InputError
from model.io.case_mix import CASE_MIX_COLUMNS, parse_case_mix_text
from model.year.inputs import CaseMix
from tests.helpers.fuzz import FUZZ
from tests.helpers.parser_fuzz import (
    _NUMBERS,
    PARSER_FUZZ,
    STRUCTURED,
    _mangled,
    _only_input_error,
    _table,
)

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
    from model.io.case_mix import parse_case_mix_text

    out = io.StringIO()
    csv.writer(out, lineterminator="\n").writerows(
        [["case_type", "cases_per_year", "median_duration", "sevoflurane", "plan"], ["t", "10", "90", "1", name]]
    )
    with pytest.raises(InputError):
        parse_case_mix_text(out.getvalue(), str(ROOT / "demo_data" / "year" / "fuzz.csv"))


@settings(FUZZ, max_examples=300)
@given(count=_NUMBERS, median=_NUMBERS, spread=_NUMBERS, weight=_NUMBERS)
def test_huge_and_tiny_case_mix_numbers_give_mix_or_input_error(count, median, spread, weight):
    from model.io.case_mix import parse_case_mix_text
    from model.io.plans import load_plan

    plan = load_plan(ROOT / "demo_data" / "plans" / "lap_chole_low_flow.toml")
    text = (
        "case_type,cases_per_year,median_duration,duration_spread,sevoflurane,weight,plan\n"
        f"t,{count},{median},{spread},1,{weight},p.toml\n"
    )
    try:
        mix = parse_case_mix_text(text, "fuzz.csv", lambda name, where: plan)
    except InputError:
        return
    t = mix.types[0]
    assert all(math.isfinite(v) for v in (t.cases_per_year, t.median_min, t.spread, t.weight_kg))


YEAR = ROOT / "demo_data" / "year"


DEMO_PLAN = load_plan(ROOT / "demo_data" / "plans" / "lap_chole_low_flow.toml")


CASE_MIX_TEXT = (YEAR / "fernhollow_casemix.csv").read_text()


def _plan_for(name, where):
    if name.startswith("plans/"):
        return DEMO_PLAN
    raise InputError(where, name, "no such plan (fuzz)")


def _case_mix(text):
    result = _only_input_error(parse_case_mix_text, text, "fuzz.csv", _plan_for)
    if result is not None:
        assert isinstance(result, CaseMix) and result.types
        assert all(t.cases_per_year >= 0 and t.median_min > 0 for t in result.types)
    return result


@STRUCTURED
@given(_table(list(CASE_MIX_COLUMNS)))
def test_case_mix_with_wrong_columns_and_cells_gives_mix_or_input_error(text):
    _case_mix(text)


@STRUCTURED
@given(_mangled(CASE_MIX_TEXT))
def test_demo_case_mix_with_one_line_mangled_gives_mix_or_input_error(text):
    _case_mix(text)


@PARSER_FUZZ
@given(st.binary(max_size=2000))
def test_case_mix_from_raw_bytes_gives_mix_or_input_error(data):
    _case_mix(data.decode("utf-8", errors="replace"))


@PARSER_FUZZ
@given(st.text(alphabet=st.sampled_from(list(',"\n\r #abcdeilnmoprstuv0123456789.-%/')), max_size=300))
def test_case_mix_from_csv_like_text_gives_mix_or_input_error(text):
    _case_mix(CASE_MIX_TEXT.splitlines()[5] + "\n" + text)
