"""Output helpers shared by the sub-commands: tables, JSON, the caution, exit status."""

from __future__ import annotations

import argparse
import json
import re
import sys
from collections.abc import Iterator
from contextlib import contextmanager

from model.base.errors import InputError
from model.base.jsonable import infinite_paths, to_json_value
from model.cautions import STANDING_CAUTION

EXIT_INPUT = 2

#: Characters a terminal may act on rather than show: C0 controls but the line break and tab,
#: DEL, C1 controls (CSI U+009B starts an escape sequence on some terminals), the line and
#: paragraph separators and the bidirectional controls (Unicode Standard Annex #9), which
#: reorder what is shown.
_ACTED_ON = "\x00-\x08\x0b-\x1f\x7f-\x9f\u061c\u200e\u200f\u2028\u2029\u202a-\u202e\u2066-\u2069"
_ACTED_ON_RE = re.compile(f"[{_ACTED_ON}]")
_CELL_RE = re.compile(f"[{_ACTED_ON}\n\t]")


def _escape(match: re.Match) -> str:
    c = ord(match.group())
    return f"\\x{c:02x}" if c <= 0xFF else f"\\u{c:04x}"


def shown(text: str) -> str:
    """``text`` with every character a terminal would act on written as an escape (ESC as a backslash and ``x1b``).

    Line breaks and tabs stay; escape sequences, carriage returns, C1 controls and
    bidirectional controls in names from a user's file are shown, never obeyed.
    """
    return _ACTED_ON_RE.sub(_escape, text)


def shown_cell(text: str) -> str:
    """A table cell or a name on one line: as :func:`shown`, line breaks and tabs escaped too."""
    return _CELL_RE.sub(_escape, text)


class ShownStream:
    """A text stream that writes everything through :func:`shown`; ``raw`` is the stream itself."""

    def __init__(self, raw):
        self.raw = raw

    def write(self, text: str) -> int:
        """Write ``text`` with control characters escaped; the count of characters given."""
        self.raw.write(shown(text))
        return len(text)

    def __getattr__(self, name):
        return getattr(self.raw, name)


@contextmanager
def shown_output() -> Iterator[None]:
    """While it lasts, standard output and error show control characters escaped."""
    out, err = sys.stdout, sys.stderr
    sys.stdout = ShownStream(out)
    sys.stderr = ShownStream(err)
    try:
        yield
    finally:
        sys.stdout, sys.stderr = out, err


class _Parser(argparse.ArgumentParser):
    """argparse that reports a bad flag as one line with exit status 2."""

    def error(self, message):
        self.exit(EXIT_INPUT, f"gas-ledger: {message} (see 'gas-ledger --help')\n")


def _fmt(value, digits=2, money=False):
    if value is None or (isinstance(value, float) and value != value):
        return "-"  # None or NaN: no figure (e.g. the mean flow of a case with no minutes)
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, float):
        if value.is_integer() and not money:
            return f"{int(value):,}"  # a count held as a float: "1,502", not "1,502.00"
        if value != 0 and abs(value) < 10**-digits:
            return f"{value:.2g}"  # small shares (e.g. 0.0002) would print as 0.00
        text = f"{value:,.{digits}f}"
        return text[1:] if text.startswith("-") and not text.strip("-0.,") else text  # no "-0.00"
    return str(value)


def refuse_infinite(data, what: str = "results") -> None:
    """Raise InputError when ``data`` holds an infinite number: such output is never printed or written.

    The limits of every input keep the figures finite; this is the guard behind them, so a
    case they miss gives one clear line (exit status 2) rather than "inf" in a table or a
    silent null in JSON.
    """
    paths = infinite_paths(data)
    if paths:
        raise InputError(
            what,
            ", ".join(paths),
            "could not be worked out: a value in use is too small or too large to compute with "
            "(check the plan, scenario and reference values); nothing was written",
        )


def print_table(rows, columns, out=None, currency: str = ""):
    """Print rows (dicts) as a plain aligned text table, headed in words (``column_label``).

    Shares are shown in per cent, as their headings say; ``currency`` labels cost headings.
    Refused if a figure is infinite; characters a terminal would act on are shown escaped.
    """
    from model.present.readable import column_label, is_money, is_share

    refuse_infinite(rows)
    out = out or sys.stdout  # looked up at call time, so redirected output is honoured

    def cell(value, column):
        if is_share(column) and isinstance(value, (int, float)) and not isinstance(value, bool):
            value = float(value) * 100.0
        return shown_cell(_fmt(value, money=is_money(column)))

    cells = [[cell(r.get(c), c) for c in columns] for r in rows]
    heads = [column_label(c, currency) for c in columns]
    widths = [max([len(h)] + [len(row[i]) for row in cells]) for i, h in enumerate(heads)]
    out.write("  ".join(h.ljust(w) for h, w in zip(heads, widths, strict=True)).rstrip() + "\n")
    out.write("  ".join("-" * w for w in widths) + "\n")
    for row in cells:
        out.write("  ".join(v.ljust(w) for v, w in zip(row, widths, strict=True)).rstrip() + "\n")


def print_json(data, out=None):
    """Print data as JSON (:func:`model.base.jsonable.to_json_value`: a number that is not finite is null).

    Characters a terminal would act on are written as JSON escapes (CSI as a backslash and ``u009b``), which
    a JSON reader turns back into the same text.
    """
    refuse_infinite(data)
    out = out or sys.stdout
    text = json.dumps(to_json_value(data), indent=2, ensure_ascii=False, allow_nan=False)
    out.write(_ACTED_ON_RE.sub(lambda m: f"\\u{ord(m.group()):04x}", text) + "\n")


#: The standing caution, printed after every table and carried in every JSON output.
CAUTION = STANDING_CAUTION


def _reference(args):
    from model.reference import load_settings

    return load_settings(args.settings)
