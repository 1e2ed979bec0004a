"""Example settings of the fuzz tests, the verdict on a store file they made, and odd values.

The examples are derandomized, and so repeatable, under the ``ci`` Hypothesis profile
(tests/conftest.py); the ``fuzz`` profile raises every count to its own.
"""

from __future__ import annotations

import functools
import hashlib
import math
import re
from pathlib import Path

import pint
from hypothesis import HealthCheck, settings
from hypothesis import strategies as st

FUZZ = settings(
    max_examples=1000,
    deadline=None,
    suppress_health_check=[
        HealthCheck.too_slow,
        HealthCheck.data_too_large,
        HealthCheck.filter_too_much,
        HealthCheck.function_scoped_fixture,
    ],
)
#: For readers that take a tenth of a second an example (duckdb, SQLite).
SLOW = settings(FUZZ, max_examples=80)


def store_refused_untouched_or_works(path: Path) -> None:
    """Open a store file: refused with one line and left as it was, or it works."""
    from model.base.errors import InputError
    from model.store import Store, StoreError

    before = hashlib.sha256(path.read_bytes()).hexdigest()
    try:
        s = Store(path)
    except StoreError as exc:
        assert "\n" not in str(exc)
        assert hashlib.sha256(path.read_bytes()).hexdigest() == before
        return
    try:  # accepted: it works, or refuses with the store's own error, never a traceback
        s.names("scenario")
        s.save("plan", "fuzz", "x")
        assert s.get("plan", "fuzz").body == "x"
    except InputError:
        pass


# ---- values as hospitals type them: dimensionless units, subnormal and boolean values ------


#: The smallest positive doubles and their neighbours (IEEE 754 binary64: 5e-324 is the least
#: subnormal, 2.2250738585072014e-308 the least normal number).
SUBNORMALS = (5e-324, 1e-323, 1e-320, 1e-310, 2.225073858507201e-308, 2.2250738585072014e-308, 1e-300)
#: Dimensionless units pint defines (percent = 0.01, ppm = 1e-6, permille = 0.001), a ratio of
#: like units, ratios of offset units that pint would turn into nonsense, and no unit.
DIMENSIONLESS_UNITS = ("%", "percent", "ppm", "permille", "K/K", "degC/degC", "degF/degC", "")
#: "nan" and "inf" as Python prints them: no output of the program holds either.
NON_FINITE_WORD = re.compile(r"(?<![A-Za-z_])-?(nan|inf|infinity)(?![A-Za-z_])", re.IGNORECASE)

tiny = st.one_of(st.sampled_from(SUBNORMALS), st.floats(5e-324, 1e-300))
magnitudes = st.one_of(tiny, st.floats(0.0, 1e4, allow_nan=False), st.sampled_from([0.0, 1.0, 50.0, 100.0]))


@st.composite
def dimensionless_texts(draw) -> str:
    """A number and a dimensionless unit as someone types it ("0.5 percent", "30%", "1 ppm")."""
    number = draw(magnitudes)
    unit = draw(st.sampled_from(DIMENSIONLESS_UNITS))
    space = draw(st.sampled_from([" ", "", "  "])) if unit else ""
    return f"{number!r}{space}{unit}"


#: Any odd value of these classes: a subnormal, a boolean, a number with a dimensionless unit.
odd_values = st.one_of(
    tiny,
    tiny.map(lambda x: -x),
    st.booleans(),
    dimensionless_texts(),
    tiny.map(lambda x: f"{x!r} L/min"),
)


@functools.cache
def reference_registry() -> pint.UnitRegistry:
    """A pint registry of its own, the reference of the conversions (not the package's)."""
    return pint.UnitRegistry(autoconvert_offset_to_baseunit=True)


_NUMBER = re.compile(r"^\s*[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?")


def reference_value(value, unit: str) -> float | None:
    """What pint makes of ``value`` in ``unit`` (None: it is no such quantity, or a boolean).

    A plain number is read in ``unit``. A unit text of several units that holds an offset
    unit (degC, degF) is None: pint turns "22.5 degC/degC" into 295.65 K / 273.15 K.
    """
    if isinstance(value, bool):
        return None
    if isinstance(value, (int, float)):
        return float(value) if math.isfinite(value) else None
    m = _NUMBER.match(value)
    if not m:
        return None
    unit_text = value[m.end() :].strip()
    if not unit_text:
        return float(value)
    if len(re.findall(r"[A-Za-z_%]+", unit_text)) > 1 and re.search(r"deg[CF]", unit_text):
        return None
    try:
        return float(reference_registry().Quantity(value).to(unit).magnitude)
    except Exception:
        return None


def assert_no_non_finite(text: str) -> None:
    """No "nan" or "inf" word in what the program printed or wrote."""
    hit = NON_FINITE_WORD.search(text)
    assert hit is None, text[max(0, hit.start() - 80) : hit.end() + 80]
