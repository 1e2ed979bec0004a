"""Pieces of the plan and settings fuzz tests: settings, random values and fields, the one-error verdict."""

from __future__ import annotations

import tomli_w
from hypothesis import HealthCheck, settings
from hypothesis import strategies as st

from model.base.errors import InputError

# Example counts keep this file near 40 s on one core: structured cases are slow to generate.
# Derandomized under the ci Hypothesis profile (tests/conftest.py), so a CI run is repeatable.
FUZZ = settings(
    max_examples=1500,
    deadline=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large, HealthCheck.filter_too_much],
)


STRUCTURED = settings(FUZZ, max_examples=300)


def _only_input_error(call, *args):
    """Run a parser; return its result or None when it raised InputError (one line)."""
    try:
        return call(*args)
    except InputError as exc:
        assert str(exc).strip(), "an InputError needs a message"
        return None


_units = st.sampled_from(
    [
        "L/min",
        "mL/min",
        "min",
        "h",
        "s",
        "kg",
        "g",
        "lb",
        "year",
        "day",
        "degC",
        "degF",
        "K",
        "kPa",
        "mmHg",
        "bar",
        "%",
        "MAC",
        "m",
        "furlong",
        "",
        "L",
        "mL",
        "1/min",
        "dimensionless",
        "kelvin/second",
    ]
)


_numbers = st.one_of(
    st.integers(min_value=-(10**30), max_value=10**30),
    st.floats(allow_nan=True, allow_infinity=True),
    st.sampled_from([0, -0.0, 1e-320, 1e308, 2**63, -1, 0.5, 100, 1e9]),
)


_quantity_text = st.builds(lambda n, u: f"{n} {u}".strip(), _numbers, _units)


_nasty_text = st.one_of(
    st.text(max_size=30),
    st.sampled_from(
        [
            "",
            " ",
            "nan",
            "inf",
            "-inf",
            "1e999 L/min",
            "0x10",
            "1_000",
            "½",
            "=1+1",
            "+cmd|' /C calc'!A0",
            "@SUM(A1)",
            "<script>alert(1)</script>",
            "sevo",
            "N2O",
            "Sevoflurane ",
            "xenon",
            "2 % % %",
            "L/min",
            "3 L/min/min",
            "1 L/min + 2",
            "(1",
            "1)",
            "**",
            "1e-400 kg",
            "10 ** 400 kg",
            "'; DROP TABLE plans; --",
            "\u202egnirts",
            "a" * 200,
        ]
    ),
)


_scalars = st.one_of(_numbers, _quantity_text, _nasty_text, st.booleans(), st.dates(), st.datetimes(), st.times())


_values = st.recursive(
    _scalars,
    lambda inner: st.one_of(st.lists(inner, max_size=3), st.dictionaries(st.text(max_size=8), inner, max_size=3)),
    max_leaves=5,
)


def _maybe(field_values: dict):
    """A table with a random subset of its fields, each a plausible or a wrong value."""
    return st.fixed_dictionaries({}, optional={k: st.one_of(v, _values) for k, v in field_values.items()})


def _toml_or_none(data):
    try:
        return tomli_w.dumps(data)
    except Exception:  # noqa: BLE001  (values TOML cannot hold: the test skips them)
        return None
