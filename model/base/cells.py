"""Text cells a spreadsheet program will not run: the one neutralising writer of every CSV.

A spreadsheet program reads a cell that begins with ``=``, ``+``, ``-``, ``@``, a tab or a
carriage return as a formula (a ``HYPERLINK`` or worse), also after leading spaces or
no-break spaces, which it drops. Every CSV and workbook the program writes passes its text
cells through :func:`neutralise`: such a cell gets a leading apostrophe, which keeps it text
and which spreadsheet programs do not show. (OWASP, "CSV Injection"; common practice.)

The program's own readers of the files it writes (case mixes, purchases) take that
apostrophe off again (:func:`unneutralise`), so a file written and read back gives the names
it was written with. The two are exact inverses: a name that itself begins with an
apostrophe before a formula start gets a second one.
"""

from __future__ import annotations

import csv
import re

import pandas as pd

#: Characters that make a spreadsheet read a cell as a formula.
FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")
#: Prefix that keeps such a cell as text.
NEUTRAL_PREFIX = "'"
#: Characters a spreadsheet may skip before it sees a formula start: every white space
#: (spaces, no-break spaces, line breaks, NEL), the zero-width space and the byte-order mark.
_SKIPPED = "".join(chr(c) for c in range(0x3000 + 1) if chr(c).isspace()) + "\u200b\ufeff"


def _runs(text: str) -> bool:
    """True when a spreadsheet may read ``text`` as a formula (or it is a neutralised one)."""
    if text.startswith(FORMULA_STARTS) or text.lstrip(_SKIPPED).startswith(FORMULA_STARTS):
        return True
    return text.startswith(NEUTRAL_PREFIX) and _runs(text[len(NEUTRAL_PREFIX) :])


def neutralise(value):
    """A cell value safe to open in a spreadsheet program.

    Parameters
    ----------
    value : object
        A cell: text, a number, a boolean, None.

    Returns
    -------
    object
        Text a spreadsheet would read as a formula (a formula start at the beginning or
        after leading white space), or one already neutralised, with
        :data:`NEUTRAL_PREFIX` in front; every other value unchanged.
    """
    if isinstance(value, str) and _runs(value):
        return NEUTRAL_PREFIX + value
    return value


def unneutralise(text: str) -> str:
    """The text a :func:`neutralise` d cell was written from (unchanged when it was not)."""
    if text.startswith(NEUTRAL_PREFIX) and _runs(text[len(NEUTRAL_PREFIX) :]):
        return text[len(NEUTRAL_PREFIX) :]
    return text


#: Characters XML 1.0 cannot hold (section 2.2, "Characters"), so no workbook cell can.
_NOT_XML = re.compile("[\x00-\x08\x0b\x0c\x0e-\x1f\ud800-\udfff\ufffe\uffff]")


def workbook_text(text: str) -> str:
    r"""Text for a workbook cell: control characters XML cannot hold shown as ``\x1b``, neutralised.

    A name from a user's file may hold an escape character or a bell; a workbook (XML)
    cannot, so they are written visibly instead of failing the whole download.
    """

    def shown(match: re.Match) -> str:
        c = ord(match.group())
        return f"\\x{c:02x}" if c <= 0xFF else f"\\u{c:04x}"

    return neutralise(_NOT_XML.sub(shown, text))


def neutralise_frame(df: pd.DataFrame) -> pd.DataFrame:
    """A copy of ``df`` with text cells and column names neutralised; numbers untouched."""
    out = df.copy()
    out.columns = [neutralise(str(c)) for c in out.columns]
    for col in out.columns:
        if out[col].dtype == object or pd.api.types.is_string_dtype(out[col]):
            # Cell by cell into an object column: ``Series.map`` would infer a dtype again and
            # turn a column of whole numbers held as objects (3080) back into floats (3080.0).
            values = [neutralise(v) if isinstance(v, str) else v for v in out[col]]
            out[col] = pd.Series(values, index=out.index, dtype=object)
    return out


def csv_text(df: pd.DataFrame, lineterminator: str = "\r\n") -> str:
    """One table as CSV text, every text cell and column name neutralised.

    Parameters
    ----------
    df : pandas.DataFrame
        The table; its index is not written.
    lineterminator : str
        Line ends: CRLF (RFC 4180, the default), which makes the writer quote any field
        holding a carriage return or a newline, or a newline alone. With a newline alone the
        writer would leave a carriage return inside a field unquoted, and a reader (which
        ends a line at either) would cut the row there: a table holding a line break in any
        text is then written with all its text quoted.
    """
    out = neutralise_frame(df)
    quoting = csv.QUOTE_MINIMAL
    if lineterminator != "\r\n":
        text = out.select_dtypes(exclude="number")
        if any(isinstance(v, str) and ("\r" in v or "\n" in v) for v in text.to_numpy().ravel()):
            quoting = csv.QUOTE_NONNUMERIC
    return out.to_csv(index=False, lineterminator=lineterminator, quoting=quoting)
