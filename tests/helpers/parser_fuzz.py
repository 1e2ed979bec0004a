"""Pieces of the parser fuzz tests: settings, random CSV tables and lines, the one-error verdict."""

from __future__ import annotations

from pathlib import Path

from hypothesis import HealthCheck, settings
from hypothesis import strategies as st

from model.base.errors import InputError


def _lines_file(header: bytes, lines: list[bytes], crlf: bool, final_break: bool) -> bytes:
    br = b"\r\n" if crlf else b"\n"
    return header + br + br.join(lines) + (br if final_break else b"")


_NUMBERS = st.one_of(
    st.sampled_from(
        [
            "1e306",
            "1e308",
            "1e309",
            "-1e308",
            "1e-320",
            "5e-324",
            "1e-400",
            "-0",
            "0",
            "1e9",
            "1e10",
            "9" * 400,
            "0." + "0" * 400 + "1",
            "1e+0999",
        ]
    ),
    st.floats(allow_nan=False, allow_infinity=False).map(repr),
    st.integers(-(10**30), 10**30).map(str),
)


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


def _table(columns_pool):
    """CSV text: a header from the pool (plus strangers) and rows of random cells."""
    return st.builds(
        lambda header, rows, raw_quote: "\n".join(
            [_csv_line(header)] + [_csv_line(r) if not raw_quote else ",".join(r) for r in rows]
        ),
        st.lists(
            st.one_of(st.sampled_from(columns_pool), st.text(max_size=8)), min_size=0, max_size=len(columns_pool) + 2
        ),
        st.lists(st.lists(_cells, max_size=len(columns_pool) + 2), max_size=5),
        st.booleans(),
    )


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


def _write(folder: Path, name: str, data: bytes) -> Path:
    path = folder / name
    path.write_bytes(data)
    return path


STRUCTURED = settings(PARSER_FUZZ, max_examples=400)
