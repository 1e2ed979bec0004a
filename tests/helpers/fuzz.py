"""Example settings of the fuzz tests, the verdict on a store file they made, text strategies and odd values.

The text strategies make what hospitals' files and proxies really send: identities that only
look like an editor's, header values with control characters or odd spaces, cells with a
formula start after leading spaces, and names with terminal control characters.

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


# ---- text strategies -----------------------------------------------------------------------

#: One character and what Unicode case folding or compatibility mapping makes of it
#: (CaseFolding.txt and UnicodeData.txt of the Unicode Character Database): each pair looks
#: alike to a reader, and ``casefold()`` or NFKC would merge it with the plain spelling.
CONFUSABLE_PAIRS = (
    ("ss", "\u00df"),  # sharp s, also the Latin-1 byte 0xDF of a header
    ("s", "\u017f"),  # long s
    ("fi", "\ufb01"),  # ligature fi
    ("fl", "\ufb02"),  # ligature fl
    ("k", "\u212a"),  # Kelvin sign
    ("a", "\u00aa"),  # feminine ordinal indicator, Latin-1 byte 0xAA (NFKC: a)
    ("o", "\u00ba"),  # masculine ordinal indicator, Latin-1 byte 0xBA (NFKC: o)
    ("1", "\u00b9"),  # superscript one, Latin-1 byte 0xB9 (NFKC: 1)
    ("e", "\uff45"),  # fullwidth e (NFKC: e)
)

#: Characters a header or sign-in claim must not carry anywhere: C0 and C1 controls, DEL,
#: every space but the ASCII one, format characters (zero-width, bidirectional), separators.
HEADER_CONTROLS = (
    "\x00\x01\x07\x08\t\n\x0b\x0c\r\x1b\x1f\x7f\x80\x85\x9b\x9f"
    "\u00a0\u1680\u2000\u2007\u200a\u200b\u200c\u200d\u200e\u2028\u2029\u202e\u202f\u205f\u2066\u3000\ufeff"
)

#: Characters that start a formula in a spreadsheet (OWASP, "CSV Injection").
FORMULA_STARTS = "=+-@\t\r"
#: What a spreadsheet may skip before it: spaces, no-break spaces and other white space.
LEADING_SPACES = " \u00a0\u2007\u202f\u3000\n\x0b\x0c\u0085\u200b\ufeff"

#: Characters a terminal acts on (ECMA-48 C0 and C1 controls, Unicode Standard Annex #9).
TERMINAL_CONTROLS = "\x00\x07\x08\x0b\x0c\r\x1b\x7f\x85\x9b\x9d\u061c\u200e\u200f\u2028\u2029\u202a\u202e\u2066\u2069"


def editor_addresses():
    """Plain ASCII e-mail addresses of editors, built of pieces that have look-alikes."""
    pieces = st.lists(st.sampled_from(["ss", "s", "fi", "fl", "k", "a", "o", "e", "1", "m", "n", "r", "."]), max_size=6)
    return st.builds(lambda p: "".join(["l", *p, "d"]) + "@fernhollow.example", pieces)


@st.composite
def lookalike_of(draw, editor: str) -> str:
    """``editor`` with some letters swapped for their look-alikes, and some ASCII case changed."""
    out = editor
    for plain, alike in draw(st.lists(st.sampled_from(CONFUSABLE_PAIRS), min_size=1, max_size=4)):
        if plain in out:
            at = draw(st.integers(0, out.count(plain) - 1))
            parts = out.split(plain)
            out = plain.join(parts[: at + 1]) + alike + plain.join(parts[at + 1 :])
    flips = draw(st.lists(st.booleans(), min_size=len(out), max_size=len(out)))
    return "".join(c.upper() if flip and c.isascii() else c for c, flip in zip(out, flips, strict=True))


@st.composite
def latin1_header_value(draw, editor: str) -> str:
    """What the server makes of header bytes: ``editor``'s bytes with some Latin-1 bytes in.

    Streamlit's server decodes header bytes as Latin-1, so a byte 0xDF becomes U+00DF, which
    case folding reads as "ss": some "ss" become that byte, and other bytes are put in.
    """
    raw = bytearray(editor.encode("ascii"))
    replaced = False
    if b"ss" in raw and draw(st.booleans()):
        at = raw.index(b"ss")
        raw[at : at + 2] = b"\xdf"
        replaced = True
    for _ in range(draw(st.integers(0 if replaced else 1, 3))):
        at = draw(st.integers(0, len(raw)))
        raw[at:at] = bytes([draw(st.sampled_from([0xDF, 0xAA, 0xBA, 0xB9, 0xB5, 0xC4, 0xE9, 0xFF]))])
    return bytes(raw).decode("latin-1")


@st.composite
def with_header_control(draw, identity: str) -> str:
    """``identity`` with one or more control characters or odd spaces at its ends or inside."""
    out = identity
    for _ in range(draw(st.integers(1, 3))):
        at = draw(st.sampled_from([0, len(out), draw(st.integers(0, len(out)))]))
        out = out[:at] + draw(st.sampled_from(HEADER_CONTROLS)) + out[at:]
    return out


def formula_cells():
    """Cell text with a formula start, at once or after leading spaces, then any text."""
    return st.builds(
        lambda lead, start, rest: lead + start + rest,
        st.text(alphabet=LEADING_SPACES, max_size=4),
        st.sampled_from(FORMULA_STARTS),
        st.text(alphabet=st.characters(exclude_categories=("Cs",)), max_size=20),
    ).filter(lambda t: t.strip() != "")


def cell_runs_as_formula(text: str) -> bool:
    """What a spreadsheet may run: a formula start at once, or after leading white space."""
    skipped = "".join(chr(c) for c in range(0x3001) if chr(c).isspace()) + "\u200b\ufeff"
    return text.startswith(tuple(FORMULA_STARTS)) or text.lstrip(skipped).startswith(tuple(FORMULA_STARTS))


def names_with_controls(alphabet: str = "ABCabc -"):
    """A short name holding terminal control characters among ordinary letters."""
    return st.text(alphabet=alphabet + TERMINAL_CONTROLS, min_size=1, max_size=16).filter(
        lambda t: any(c in TERMINAL_CONTROLS for c in t) and t.strip()
    )


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
