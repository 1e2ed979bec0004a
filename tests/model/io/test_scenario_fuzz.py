"""Fuzzed scenario files (hypothesis): a scenario, or one InputError; never a traceback."""

from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from model.base.errors import InputError
from model.io import scenario

ROOT = Path(__file__).resolve().parents[3]


YEAR = ROOT / "demo_data" / "year"


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


SCENARIO_TEXT = (YEAR / "baseline_2l.toml").read_text()


@pytest.fixture(scope="module")
def demo_mix():
    from model.io.casemix import load_casemix

    return load_casemix(YEAR / "fernhollow_casemix.csv")


@STRUCTURED
@given(text=_mangled(SCENARIO_TEXT))
def test_demo_scenario_with_one_line_mangled_gives_scenario_or_input_error(text, demo_mix):
    _only_input_error(scenario.parse_scenario_text, text, "fuzz.toml", YEAR, demo_mix)


@PARSER_FUZZ
@given(data=st.binary(max_size=1500))
def test_scenario_from_raw_bytes_gives_scenario_or_input_error(data, demo_mix):
    _only_input_error(scenario.parse_scenario_text, data.decode("utf-8", errors="replace"), "fuzz.toml", YEAR, demo_mix)
