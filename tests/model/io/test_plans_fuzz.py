"""Fuzzing the plan parser and the settings loader: a result or an InputError, nothing else.

Inputs are raw bytes, random text, TOML-looking text, and well-formed TOML whose fields are
wrong in type, unit, range or name. The invariant of every test: the parser returns a plan
(or a Reference) or raises ``model.base.errors.InputError`` with a one-line message.
"""

import math
from pathlib import Path

import pytest
from hypothesis import assume, given
from hypothesis import strategies as st

from model import CasePlan, parse_plan_text
from model.io.plans import plan_from_dict
from tests.helpers.plan_fuzz import (
    FUZZ,
    STRUCTURED,
    _maybe,
    _nasty_text,
    _numbers,
    _only_input_error,
    _quantity_text,
    _toml_or_none,
    _values,
)

ROOT = Path(__file__).resolve().parents[3]


DEMO_PLAN = (ROOT / "demo_data" / "plans" / "lap_chole_low_flow.toml").read_text()


_phase = _maybe(
    {
        "name": st.text(max_size=100),
        "duration": st.one_of(_quantity_text, _numbers),
        "o2": st.one_of(_quantity_text, _numbers),
        "air": st.one_of(_quantity_text, _numbers),
        "n2o": st.one_of(_quantity_text, _numbers),
        "dial": st.one_of(_quantity_text, _numbers),
        "target": st.one_of(_numbers, _quantity_text),
        "extra": _values,
    }
)


_plan_dicts = st.fixed_dictionaries(
    {},
    optional={
        "format": st.sampled_from(["fresh-gas-ledger plan 1", "fresh-gas-ledger plan 2", "", 1]),
        "name": st.text(max_size=150),
        "agent": st.one_of(
            st.sampled_from(
                [
                    "sevoflurane",
                    "desflurane",
                    "isoflurane",
                    "halothane",
                    "nitrous_oxide",
                    "oxygen",
                    "air",
                    "SEVO",
                    "xenon",
                    "",
                ]
            ),
            _values,
        ),
        "patient": st.one_of(
            _maybe(
                {
                    "weight": _quantity_text,
                    "age": _quantity_text,
                    "cardiac_output": _quantity_text,
                    "o2_consumption": _quantity_text,
                    "minute_ventilation": _quantity_text,
                }
            ),
            _values,
        ),
        "settings": st.one_of(
            _maybe(
                {
                    "room_temperature": _quantity_text,
                    "pressure": _quantity_text,
                    "gwp_source": st.sampled_from(
                        ["ar6_gwp100", "ar6_gwp20", "ar5_gwp100", "sulbaek_andersen_2012", "user", "ar7", ""]
                    ),
                    "capture_efficiency": st.one_of(_numbers, _quantity_text),
                    "min_o2_share": st.one_of(_numbers, _quantity_text),
                    "n2o_cutoff_o2_flow": _quantity_text,
                    "ratio_limit": st.sampled_from(["cap_n2o", "raise_o2", "none"]),
                    "inspired_o2_floor": st.one_of(_numbers, _quantity_text),
                    "sevoflurane_min_flow": _quantity_text,
                }
            ),
            _values,
        ),
        "prices": st.one_of(
            st.dictionaries(st.sampled_from(["currency", "bottle", "oxygen_per_1000_l", "x"]), _values, max_size=3),
            _values,
        ),
        "phases": st.one_of(st.lists(_phase, max_size=4), _values),
        "unknown": _values,
    },
)


@STRUCTURED
@given(_plan_dicts)
def test_plan_dict_with_wrong_fields_gives_plan_or_input_error(data):
    plan = _only_input_error(plan_from_dict, data, "fuzz.toml")
    if plan is not None:
        assert isinstance(plan, CasePlan)
        assert all(math.isfinite(p.minutes) and p.minutes > 0 for p in plan.phases)


@pytest.mark.slow
@STRUCTURED
@given(_plan_dicts)
def test_plan_toml_with_wrong_fields_gives_plan_or_input_error(data):
    text = _toml_or_none(data)
    assume(text is not None)
    result = _only_input_error(parse_plan_text, text, "fuzz.toml")
    assert result is None or isinstance(result, CasePlan)


@FUZZ
@given(st.binary(max_size=3000))
def test_plan_from_raw_bytes_gives_plan_or_input_error(data):
    # Raw bytes as a page would hand them on: decoded leniently, then parsed.
    text = data.decode("utf-8", errors="surrogateescape")
    result = _only_input_error(parse_plan_text, text, "fuzz.toml")
    assert result is None or isinstance(result, CasePlan)


@FUZZ
@given(st.text(alphabet=st.sampled_from(list("[]{}=\"'.,#\n \t-+_:0123456789aeinost%/L")), max_size=400))
def test_plan_from_toml_like_text_gives_plan_or_input_error(text):
    result = _only_input_error(parse_plan_text, text, "fuzz.toml")
    assert result is None or isinstance(result, CasePlan)


@STRUCTURED
@given(st.data())
def test_demo_plan_with_one_line_mangled_gives_plan_or_input_error(data):
    lines = DEMO_PLAN.splitlines()
    i = data.draw(st.integers(0, len(lines) - 1))
    how = data.draw(st.sampled_from(["replace_value", "delete", "duplicate", "garble"]))
    if how == "replace_value" and "=" in lines[i]:
        key = lines[i].split("=", 1)[0]
        value = data.draw(st.one_of(_quantity_text, _nasty_text, _numbers))
        lines[i] = key + "= " + (_toml_or_none({"v": value}) or "1")[4:].strip()
    elif how == "delete":
        del lines[i]
    elif how == "duplicate":
        lines.insert(i, lines[i])
    else:
        pos = data.draw(st.integers(0, max(0, len(lines[i]))))
        lines[i] = lines[i][:pos] + data.draw(st.text(max_size=5)) + lines[i][pos:]
    result = _only_input_error(parse_plan_text, "\n".join(lines), "fuzz.toml")
    assert result is None or isinstance(result, CasePlan)


def test_deeply_nested_plan_is_an_input_error():
    for text in ("a = " + "[" * 5000 + "]" * 5000, "a = " + "{b = " * 3000 + "1" + "}" * 3000):
        assert _only_input_error(parse_plan_text, text, "deep.toml") is None
