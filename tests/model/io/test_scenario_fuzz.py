"""Fuzzed scenario files (hypothesis): a scenario, or one InputError; never a traceback."""

from pathlib import Path

import pytest
from hypothesis import given
from hypothesis import strategies as st

from model.io import scenario
from tests.helpers.parser_fuzz import PARSER_FUZZ, STRUCTURED, _mangled, _only_input_error

ROOT = Path(__file__).resolve().parents[3]


YEAR = ROOT / "demo_data" / "year"


SCENARIO_TEXT = (YEAR / "baseline_2l.toml").read_text()


@pytest.fixture(scope="module")
def demo_mix():
    from model.io.case_mix import load_case_mix

    return load_case_mix(YEAR / "fernhollow_casemix.csv")


@STRUCTURED
@given(text=_mangled(SCENARIO_TEXT))
def test_demo_scenario_with_one_line_mangled_gives_scenario_or_input_error(text, demo_mix):
    _only_input_error(scenario.parse_scenario_text, text, "fuzz.toml", YEAR, demo_mix)


@PARSER_FUZZ
@given(data=st.binary(max_size=1500))
def test_scenario_from_raw_bytes_gives_scenario_or_input_error(data, demo_mix):
    _only_input_error(scenario.parse_scenario_text, data.decode("utf-8", errors="replace"), "fuzz.toml", YEAR, demo_mix)
