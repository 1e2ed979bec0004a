"""The package's single pint UnitRegistry and the parsing of user-typed quantities."""

from __future__ import annotations

import functools
import math
import re

import pint

from model.base.errors import InputError


@functools.lru_cache(maxsize=1)
def registry() -> pint.UnitRegistry:
    """The one UnitRegistry of the package (built once, on first use)."""
    ureg: pint.UnitRegistry = pint.UnitRegistry(autoconvert_offset_to_baseunit=True)
    # Percent as a dimensionless unit, so "2 %" and "0.02" mean the same.
    if "percent" not in ureg:
        ureg.define("percent = 0.01 = %")
    return ureg


#: Longest quantity or unit text handed to pint. [characters]
MAX_QUANTITY_CHARS = 64
_POWER = re.compile(r"\*\*|\^")
# A power pint may evaluate: a one-digit exponent, not itself raised to a power.
_SMALL_POWER = re.compile(r"(?:\*\*|\^)\s*[+-]?\d(?![\d.eE])(?!\s*(?:\*\*|\^))")


#: The one grammar of a number in a cell of a file (case records and purchases alike):
#: an optional sign, ASCII digits 0-9 with an optional decimal point, an optional
#: exponent. Nothing else: no digit separators ("1_5", "1,5", "1 500"), no digits of other
#: scripts, no "inf" or "nan". docs/formats.md documents it ("Numbers in files").
NUMBER_GRAMMAR = r"[+-]?([0-9]+\.?[0-9]*|\.[0-9]+)([eE][+-]?[0-9]+)?"
_NUMBER_TEXT = re.compile(NUMBER_GRAMMAR)


def is_number_text(text: str) -> bool:
    """Whether ``text`` is a number by :data:`NUMBER_GRAMMAR` (callers trim it first)."""
    return _NUMBER_TEXT.fullmatch(text) is not None


_LEADING_NUMBER = re.compile(r"^\s*[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?")


def one_number_and_unit(text: str) -> bool:
    """Whether ``text`` is one number then a unit ("500 mL/min", "1e3 mL", "1.5 m**3", "30 %").

    pint would also evaluate arithmetic ("1 L/min * 2", "2 L/min + 3 L/min"); a value is
    one number, so a number anywhere in the unit, other than a small exponent, is refused.
    """
    m = _LEADING_NUMBER.match(text)
    if not m:
        return False
    unit = _SMALL_POWER.sub("", text[m.end() :])
    return not any(ch.isdigit() for ch in unit) and "(" not in unit


def safe_quantity_text(text: str) -> bool:
    """Whether pint may parse ``text`` (a quantity or a unit) without risk.

    pint evaluates powers exactly, so "9**9**9" would hold a server for hours. Allowed:
    at most ``MAX_QUANTITY_CHARS`` characters and at most three powers, each with a one-digit
    exponent that is not raised again ("m**3", "s^-1", "kg*m**2/s**2").
    """
    if len(text) > MAX_QUANTITY_CHARS:
        return False
    powers = len(_POWER.findall(text))
    return powers == 0 or (powers <= 3 and len(_SMALL_POWER.findall(text)) == powers)


def to_base(value, unit: str, field: str, default_unit: str | None = None) -> float:
    """Convert a user value to a float in ``unit``.

    Parameters
    ----------
    value : str, int or float
        What the user typed: a bare number (read in ``default_unit``, or ``unit``) or a
        string with a unit such as ``"500 mL/min"``. A number with any unit text is
        converted by pint, dimensionless units too ("30 %" is 0.3, "5 ppm" is 5e-6 in
        ``"dimensionless"``); a unit of another dimension than ``unit``'s is refused.
    unit : str
        The documented base unit to return, e.g. ``"L/min"``.
    field : str
        Name of the field, used in the error message.
    default_unit : str, optional
        Unit of a bare number; defaults to ``unit``.

    Returns
    -------
    float
        The value in ``unit``.

    Raises
    ------
    InputError
        The text is not a quantity, the number is not finite, or the dimension is wrong.
    """
    default_unit = default_unit or unit
    if isinstance(value, bool):
        raise InputError(field, str(value).lower(), "expected a number, not true or false")
    if not isinstance(value, (int, float, str)):
        raise InputError(field, value, f"expected a number in {default_unit} or a quantity such as '1 {unit}'")
    try:
        return _convert(value, unit, default_unit)
    except _Refused as refusal:
        raise InputError(field, value, str(refusal)) from None


class _Refused(Exception):
    """A value ``_convert`` cannot take; the message says what is allowed."""


@functools.lru_cache(maxsize=4096)
def _convert(value, unit: str, default_unit: str) -> float:
    """``to_base`` without the field name, cached: the same text typed again is not re-parsed."""
    ureg = registry()
    if isinstance(value, (int, float)):
        try:
            number = float(value)
        except OverflowError:  # an int beyond float range
            number = math.inf
        if not math.isfinite(number):
            raise _Refused("expected a finite number")
        if default_unit == unit:
            return number
        return float(ureg.Quantity(number, default_unit).to(unit).magnitude)
    text = value.strip()
    if not text or not safe_quantity_text(text) or not one_number_and_unit(text):
        raise _Refused(f"expected a quantity such as '1 {unit}'")
    unit_text = text[_LEADING_NUMBER.match(text).end() :].strip()  # type: ignore[union-attr]
    if not unit_text:
        # A plain number typed as text: read it in the default unit.
        try:
            magnitude = float(text)
        except ValueError:
            raise _Refused(f"expected a quantity such as '1 {unit}'") from None
        return _convert(magnitude, unit, default_unit)
    # A unit was typed, a dimensionless one too (%, percent, ppm): pint converts it with its
    # meaning, and a unit of another dimension is refused.
    try:
        offset_inside = _offset_unit_inside(unit_text)
        quantity = ureg.Quantity(text)
    except Exception:
        raise _Refused(f"expected a quantity such as '1 {unit}'") from None
    if offset_inside:
        # pint turns "22.5 degC/degC" into 295.65 K / 273.15 K = 1.08: no one means that.
        raise _Refused(f"a temperature unit (degC, degF) is taken only on its own; {_expected(unit)}")
    try:
        if unit == "dimensionless" and quantity.units == ureg.percent:
            # "95 %" is 95 / 100 = 0.95, as a reader divides; pint's 95 x 0.01 is 0.9500000000000001.
            number = float(quantity.magnitude) / 100.0
        else:
            number = float(quantity.to(unit).magnitude)
    except Exception:
        raise _Refused(_expected(unit)) from None
    if not math.isfinite(number):
        raise _Refused("expected a finite number")
    return number


_UNIT_NAME = re.compile(r"[^\s*/^()0-9.+-]+")


def _offset_unit_inside(unit_text: str) -> bool:
    """Whether a unit text of several units holds one with an offset (degC, degF): 0 of it is not 0 K."""
    names = _UNIT_NAME.findall(unit_text)
    if len(names) < 2:
        return False
    ureg = registry()
    return any(float(ureg.Quantity(0.0, name).to_base_units().magnitude) != 0.0 for name in names)


def _expected(unit: str) -> str:
    """What a field takes, for the message of a unit of the wrong dimension."""
    if unit in ("dimensionless", "percent"):
        return "expected a plain number or a fraction in %, percent or ppm (e.g. '30 %')"
    return f"expected a quantity convertible to {unit}"


def check_range(
    number: float, field: str, low: float, high: float, unit: str, low_open: bool = False, typed=None
) -> float:
    """Return ``number`` if it lies in [low, high] (or (low, high]), else raise InputError.

    ``typed`` is what the user wrote (e.g. ``"900000 mL/min"``); the message quotes it and
    adds the converted value when the two differ, so the user finds their own entry.
    """
    ok = (number > low if low_open else number >= low) and number <= high
    if not ok:
        bracket = "(" if low_open else "["
        converted = f"{number:g} {unit}".strip()
        allowed = f"allowed range is {bracket}{low:g}, {high:g}] {unit}".rstrip()
        shown = converted if typed is None else str(typed).strip()
        if shown != converted:
            allowed += f" (that is {converted})"
        raise InputError(field, shown, allowed)
    return number
