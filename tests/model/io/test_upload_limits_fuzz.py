"""Fuzzed deep TOML (hypothesis): the same verdict on the pages' upload guard and the command line's readers."""

from __future__ import annotations

from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from model.base.errors import InputError
from tests.helpers.fuzz import FUZZ

ROOT = Path(__file__).resolve().parents[3]


@st.composite
def deep_toml(draw):
    levels = draw(st.one_of(st.integers(0, 12), st.sampled_from([50, 300, 1000, 3000])))
    how = draw(st.sampled_from(["array", "inline", "header", "dotted", "array_of_tables"]))
    if how == "array":
        return f"nested = {'[' * levels}1{']' * levels}\n", levels
    if how == "inline":
        return "nested = " + "{a = " * levels + "1" + "}" * levels + "\n", levels
    if how == "header":
        return "[t" + ".b" * max(levels - 1, 0) + "]\nx = 1\n" if levels else "x = 1\n", levels
    if how == "dotted":
        return ".".join(["k"] * (levels + 1)) + " = 1\n", levels
    return "[[t" + ".b" * max(levels - 1, 0) + "]]\nx = 1\n" if levels else "x = 1\n", levels


@pytest.mark.slow
@settings(FUZZ, max_examples=300)
@given(deep=deep_toml(), kind=st.sampled_from(["plan", "settings", "scenario"]), before=st.booleans())
def test_deep_toml_gives_the_same_verdict_on_the_pages_and_the_command_line(deep, kind, before, tmp_path_factory):
    from model.base.files import MAX_TOML_DEPTH
    from model.io.plans import parse_plan_text
    from model.io.scenario import parse_scenario_text
    from model.io.uploads import check_upload
    from model.reference import Reference

    text, levels = deep
    demo = {
        "plan": ROOT / "demo_data" / "plans" / "lap_chole_low_flow.toml",
        "scenario": ROOT / "demo_data" / "year" / "baseline_2l.toml",
        "settings": None,
    }[kind]
    full = (
        ((demo.read_text() + "\n") if demo else "") + text
        if before
        else text + (("\n" + demo.read_text()) if demo else "")
    )
    try:
        check_upload("x.toml", full.encode(), kind)
        page = "ok"
    except InputError as exc:
        if "characters" in str(exc):
            return  # refused first for a line over the length limit: no verdict on depth
        page = "deep" if "nest at most" in str(exc) else "other"
    try:
        if kind == "plan":
            parse_plan_text(full, "x.toml")
        elif kind == "scenario":
            parse_scenario_text(full, "x.toml", demo.parent)
        else:
            from model.base.files import parse_toml

            Reference().with_overrides(parse_toml(full, "x.toml", "settings"), "x.toml")
        cli = "ok"
    except InputError as exc:
        cli = "deep" if "nest at most" in str(exc) else "other"
    assert (page == "deep") == (cli == "deep")
    if levels > MAX_TOML_DEPTH:
        assert page != "ok" and cli != "ok"
    elif levels <= MAX_TOML_DEPTH - 2:  # appended inside a demo table it sits 2 deeper at most
        assert page != "deep" and cli != "deep"
