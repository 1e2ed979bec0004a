"""Output helpers shared by the sub-commands: tables, JSON, the caution, exit status."""

from __future__ import annotations

import argparse
import json
import sys

from model.base.jsonable import to_json_value
from model.cautions import STANDING_CAUTION

EXIT_INPUT = 2


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


def print_table(rows, columns, out=None, currency: str = ""):
    """Print rows (dicts) as a plain aligned text table, headed in words (``column_label``).

    Shares are shown in per cent, as their headings say; ``currency`` labels cost headings.
    """
    from model.present.readable import column_label, is_money, is_share

    out = out or sys.stdout  # looked up at call time, so redirected output is honoured

    def cell(value, column):
        if is_share(column) and isinstance(value, (int, float)) and not isinstance(value, bool):
            value = float(value) * 100.0
        return _fmt(value, money=is_money(column))

    cells = [[cell(r.get(c), c) for c in columns] for r in rows]
    heads = [column_label(c, currency) for c in columns]
    widths = [max([len(h)] + [len(row[i]) for row in cells]) for i, h in enumerate(heads)]
    out.write("  ".join(h.ljust(w) for h, w in zip(heads, widths, strict=True)).rstrip() + "\n")
    out.write("  ".join("-" * w for w in widths) + "\n")
    for row in cells:
        out.write("  ".join(v.ljust(w) for v, w in zip(row, widths, strict=True)).rstrip() + "\n")


def print_json(data, out=None):
    """Print data as JSON (:func:`model.base.jsonable.to_json_value`: a number that is not finite is null)."""
    out = out or sys.stdout
    json.dump(to_json_value(data), out, indent=2, ensure_ascii=False, allow_nan=False)
    out.write("\n")


#: The standing caution, printed after every table and carried in every JSON output.
CAUTION = STANDING_CAUTION


def _reference(args):
    from model.reference import load_settings

    return load_settings(args.settings)
