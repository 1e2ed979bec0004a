"""Output helpers shared by the sub-commands: tables, JSON, the caution, exit status."""

from __future__ import annotations

import argparse
import json
import sys

from model.base.errors import InputError
from model.base.jsonable import infinite_paths, to_json_value
from model.cautions import STANDING_CAUTION

EXIT_INPUT = 2


class _Parser(argparse.ArgumentParser):
    """argparse that reports a bad flag as one line with exit status 2."""

    def error(self, message):
        self.exit(EXIT_INPUT, f"gas-ledger: {message} (see 'gas-ledger --help')\n")


def _fmt(value, digits=2):
    if value is None or (isinstance(value, float) and value != value):
        return "-"  # None or NaN: no figure (e.g. the mean flow of a case with no minutes)
    if isinstance(value, float):
        if value != 0 and abs(value) < 10**-digits:
            return f"{value:.2g}"  # small shares (e.g. 0.0002) would print as 0.00
        return f"{value:,.{digits}f}"
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


def print_table(rows, columns, out=None):
    """Print rows (dicts) as a plain aligned text table (refused if a figure is infinite)."""
    refuse_infinite(rows)
    out = out or sys.stdout  # looked up at call time, so redirected output is honoured
    cells = [[_fmt(r.get(c)) for c in columns] for r in rows]
    widths = [max([len(c)] + [len(row[i]) for row in cells]) for i, c in enumerate(columns)]
    out.write("  ".join(c.ljust(w) for c, w in zip(columns, widths, strict=True)).rstrip() + "\n")
    out.write("  ".join("-" * w for w in widths) + "\n")
    for row in cells:
        out.write("  ".join(v.ljust(w) for v, w in zip(row, widths, strict=True)).rstrip() + "\n")


def print_json(data, out=None):
    """Print data as JSON (:func:`model.base.jsonable.to_json_value`: a number that is not finite is null)."""
    refuse_infinite(data)
    out = out or sys.stdout
    json.dump(to_json_value(data), out, indent=2, ensure_ascii=False, allow_nan=False)
    out.write("\n")


#: The standing caution, printed after every table and carried in every JSON output.
CAUTION = STANDING_CAUTION


def _reference(args):
    from model.reference import load_settings

    return load_settings(args.settings)
