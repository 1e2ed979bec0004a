"""Typed quantities: one number and a unit, converted with pint at the edge."""

from __future__ import annotations

import re

import pint
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


# ---- dimensionless units keep their meaning ----------------------------------------------


@pytest.mark.parametrize("text", ["1 ppm", "0.5 percent", "30 %", "30%", "250 ppm", "12.5 percent", "3 permille"])
def test_a_dimensionless_unit_keeps_its_meaning_in_a_fraction(text):
    # Reference: pint's own definitions (percent = 0.01, ppm = 1e-6, permille = 0.001).
    ureg = pint.UnitRegistry()
    expected = ureg.Quantity(text).to("dimensionless").magnitude
    assert to_base(text, "dimensionless", "capture_efficiency") == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize("text", ["2 ppm", "0.5 percent", "200 %"])
def test_a_dimensionless_unit_keeps_its_meaning_in_a_percent_field(text):
    # Reference: pint (1 % = 1 percent = 1e4 ppm).
    expected = pint.UnitRegistry().Quantity(text).to("percent").magnitude
    assert to_base(text, "percent", "dial") == pytest.approx(expected, rel=1e-12)


def test_a_plain_number_is_read_in_the_default_unit_and_percent_divides_exactly():
    # Common practice, no source: a plain number means the field's documented unit.
    assert to_base("0.3", "dimensionless", "share") == 0.3
    assert to_base("2", "percent", "dial") == 2.0
    assert to_base("95 %", "dimensionless", "adherence") == 0.95  # 95 / 100, as before


@pytest.mark.parametrize(
    "text, unit, field",
    [
        ("80 %", "kg", "weight"),
        ("2 ppm", "L/min", "o2"),
        ("22.5 degC/degC", "degC", "room_temperature"),
        ("22.5 degC/degC", "dimensionless", "capture_efficiency"),
        ("1 degF*L/min", "L/min", "o2"),
        ("0.5 L/min", "dimensionless", "capture_efficiency"),
        ("3 kg", "percent", "dial"),
    ],
)
def test_a_unit_of_another_dimension_is_refused_naming_the_field(text, unit, field):
    # Common practice, no source: a dimensionless unit is no unit of mass, flow or temperature.
    with pytest.raises(InputError, match=rf"^{field}: got '{re.escape(text)}'"):
        to_base(text, unit, field)


@pytest.mark.parametrize("value", [True, False])
def test_a_boolean_is_no_number(value):
    # TOML 1.0 (toml.io): true and false are booleans; Python would take them as 1 and 0.
    with pytest.raises(InputError, match=r"^o2: got '?(true|false)'?; expected a number, not true or false"):
        to_base(value, "L/min", "o2")
