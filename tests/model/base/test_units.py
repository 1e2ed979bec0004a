"""Typed quantities: one number and a unit, converted with pint at the edge."""

from __future__ import annotations

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from model.base.errors import InputError
from model.base.units import one_number_and_unit, to_base


@pytest.mark.parametrize(
    "text, litres_per_min",
    [
        # SI prefixes and the minute (SI brochure, 9th edition): 1 L = 1000 mL, 1 h = 60 min.
        ("500 mL/min", 0.5),
        ("1e3 mL/min", 1.0),
        (".5 L/min", 0.5),
        ("2 L / min", 2.0),
        ("30 L/h", 0.5),
        ("1 m**3/h", 1000 / 60),
        ("0.5 l/min", 0.5),
    ],
)
def test_one_number_and_a_unit_converts(text, litres_per_min):
    assert one_number_and_unit(text)
    assert to_base(text, "L/min", "o2") == pytest.approx(litres_per_min)


@pytest.mark.parametrize(
    "text", ["1 L/min * 2", "2 L/min + 3 L/min", "1 L/min / 2", "L/min", "3 * 500 mL/min", "1 (L/min)", "2 L/min - 1"]
)
def test_arithmetic_or_a_missing_number_is_refused_with_the_field_named(text):
    # pint would evaluate these; a value is one number and its unit (common practice, no source).
    assert not one_number_and_unit(text)
    with pytest.raises(InputError, match=r"^o2: got .*expected a quantity such as '1 L/min'"):
        to_base(text, "L/min", "o2")


@settings(max_examples=200, deadline=None)
@given(
    x=st.floats(0, 1e6, allow_nan=False),
    unit=st.sampled_from(["mL/min", "L/min", "L/h", "m**3/h"]),
    op=st.sampled_from(["*", "+", "-", "/"]),
    y=st.integers(0, 99),
)
def test_a_quantity_with_a_number_after_its_unit_is_never_evaluated(x, unit, op, y):
    assert one_number_and_unit(f"{x!r} {unit}")
    assert not one_number_and_unit(f"{x!r} {unit} {op} {y}")
