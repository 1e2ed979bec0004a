"""The one JSON cleaner (model.base.jsonable.to_json_value): every output is strict JSON."""

from __future__ import annotations

import dataclasses
import datetime as dt
import json
import math
from pathlib import PurePosixPath

import numpy as np
import pandas as pd
import pytest
from hypothesis import given
from hypothesis import strategies as st

from model.base.jsonable import to_json_value


@dataclasses.dataclass
class _Figure:
    name: str
    value: float
    counts: tuple


_SCALARS = st.one_of(
    st.none(),
    st.booleans(),
    st.integers(),
    st.floats(allow_nan=True, allow_infinity=True),
    st.text(max_size=8),
    st.floats(allow_nan=True, allow_infinity=True).map(np.float64),
    st.floats(allow_nan=True, allow_infinity=True, width=32).map(np.float32),
    st.integers(min_value=-(2**63), max_value=2**63 - 1).map(np.int64),
    st.booleans().map(np.bool_),
    st.sampled_from([pd.NaT, pd.NA]),
    st.datetimes(min_value=dt.datetime(1900, 1, 1), max_value=dt.datetime(2200, 1, 1)).map(pd.Timestamp),
    st.dates(),
    st.text(alphabet="abc/", max_size=8).map(PurePosixPath),
)
_KEYS = st.one_of(
    st.text(max_size=6),
    st.integers(min_value=-(2**63), max_value=2**63 - 1).map(np.int64),
    st.floats(allow_nan=True, allow_infinity=True),
)
_VALUES = st.recursive(
    _SCALARS,
    lambda inner: st.one_of(
        st.lists(inner, max_size=4),
        st.lists(inner, max_size=4).map(tuple),
        st.dictionaries(_KEYS, inner, max_size=4),
        st.lists(st.floats(allow_nan=True, allow_infinity=True), max_size=4).map(np.array),
        st.builds(_Figure, st.text(max_size=4), st.floats(), st.lists(inner, max_size=3).map(tuple)),
    ),
    max_leaves=12,
)


@given(_VALUES)
def test_every_cleaned_value_is_strict_json(value):
    # Source: RFC 8259, section 6 (JSON numbers have no NaN or infinity); Python's json
    # module refuses them with allow_nan=False.
    text = json.dumps(to_json_value(value), allow_nan=False)
    assert isinstance(json.loads(text), (type(None), bool, int, float, str, list, dict))


@given(st.floats(allow_nan=False, allow_infinity=False))
def test_a_finite_float_round_trips_exactly(x):
    # Source: Python documentation, json and float.__repr__ (the shortest repr that reads
    # back as the same double).
    for value in (x, np.float64(x)):
        back = json.loads(json.dumps(to_json_value(value), allow_nan=False))
        assert back == x and math.copysign(1.0, back) == math.copysign(1.0, x)


@given(st.sampled_from([math.nan, math.inf, -math.inf]))
def test_a_non_finite_float_is_null(x):
    # Source: RFC 8259, section 6 (no NaN or infinity); the project writes such a figure as null.
    assert to_json_value(x) is None
    assert to_json_value(np.float64(x)) is None
    assert to_json_value({"a": [x]}) == {"a": [None]}


def test_numpy_and_pandas_values_become_python_ones():
    # Common practice, no source: the JSON form of numpy scalars, times, paths and dataclasses.
    out = to_json_value(
        {
            "n": np.int64(3),
            "b": np.bool_(True),
            "f": np.float32(0.5),
            "t": pd.Timestamp("2026-03-01 08:30"),
            "missing": pd.NaT,
            "path": PurePosixPath("plans/a.toml"),
            "figure": _Figure("x", 1.5, (np.int64(1), math.nan)),
            "array": np.array([1.0, math.inf]),
            np.int64(7): "numpy key",
        }
    )
    assert out == {
        "n": 3,
        "b": True,
        "f": 0.5,
        "t": "2026-03-01T08:30:00",
        "missing": None,
        "path": "plans/a.toml",
        "figure": {"name": "x", "value": 1.5, "counts": [1, None]},
        "array": [1.0, None],
        7: "numpy key",
    }
    assert type(out["n"]) is int and type(out["b"]) is bool and type(out["f"]) is float


@pytest.mark.parametrize("value", ["text", 12, True, None])
def test_plain_json_values_pass_unchanged(value):
    # Common practice, no source.
    assert to_json_value(value) is value
