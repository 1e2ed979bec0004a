"""Reporting periods: calendar years, financial years, quarters, months and date ranges.

Syntax of our own (the same on the command line, in the dashboard and in tests):

==========================  ==============================================================
``2026``                    calendar year 2026
``FY2026-04``               financial year starting 1 April 2026 (to 31 March 2027)
``2026Q2``                  second quarter of 2026 (April to June)
``2026-03``                 one month
``2026-01-01..2026-06-30``  any date range, both ends included
==========================  ==============================================================

A case belongs to a period when its start (first sample, or its date) falls inside it.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from datetime import date, timedelta

import numpy as np
import pandas as pd

from model.base.errors import InputError

PERIOD_FORMS = (
    "2026 (calendar year)",
    "FY2026-04 (financial year starting April 2026)",
    "2026Q2 (quarter)",
    "2026-03 (month)",
    "2026-01-01..2026-06-30 (date range)",
)
_MONTH_NAMES = (
    "January",
    "February",
    "March",
    "April",
    "May",
    "June",
    "July",
    "August",
    "September",
    "October",
    "November",
    "December",
)


@dataclass(frozen=True)
class Period:
    """A reporting period: first day included, ``end`` excluded.

    Attributes
    ----------
    text : str
        The period as written (our syntax).
    label : str
        Plain words for reports, e.g. "financial year April 2026 to March 2027".
    start, end : datetime.date
        First day, and the day after the last day.
    """

    text: str
    label: str
    start: date
    end: date

    @property
    def last_day(self) -> date:
        """The last day inside the period."""
        return self.end - timedelta(days=1)

    @property
    def days(self) -> int:
        """Length in days."""
        return (self.end - self.start).days

    @property
    def months(self) -> float:
        """Length in months: whole months counted exactly, a partial month by its share of days [month]."""
        return float(sum(month_shares(self).values()))

    @property
    def midpoint_years(self) -> float:
        """Midpoint as a decimal year (2026.5 for the calendar year 2026) [year]."""
        return (_decimal_year(self.start) + _decimal_year(self.end)) / 2.0

    def contains(self, when) -> np.ndarray:
        """True where the date-times ``when`` fall in the period (vectorised; NaT is outside)."""
        t = pd.to_datetime(pd.Series(when), errors="coerce")
        lo, hi = pd.Timestamp(self.start), pd.Timestamp(self.end)
        return ((t >= lo) & (t < hi)).to_numpy(dtype=bool)

    def overlaps(self, other: Period) -> bool:
        """Whether the two periods share at least one day."""
        return self.start < other.end and other.start < self.end


def _decimal_year(d: date) -> float:
    first = date(d.year, 1, 1)
    return d.year + (d - first).days / (date(d.year + 1, 1, 1) - first).days


def _add_months(year: int, month: int, n: int) -> date:
    k = year * 12 + (month - 1) + n
    return date(k // 12, k % 12 + 1, 1)


def _year(text: str, where: str) -> int:
    y = int(text)
    if not 1900 <= y <= 2200:
        raise InputError(where, text, "expected a year between 1900 and 2200")
    return y


def parse_period(text: str, where: str = "period") -> Period:
    """Read a reporting period written in our syntax.

    Parameters
    ----------
    text : str
        One of the forms in ``PERIOD_FORMS`` (case-insensitive, spaces ignored).
    where : str
        Name of the field, for the message (e.g. "--baseline").

    Returns
    -------
    Period

    Raises
    ------
    InputError
        Naming ``where``, the text and the forms allowed.
    """
    raw = str(text)
    s = re.sub(r"\s+", "", raw).upper()
    allowed = "expected one of " + "; ".join(PERIOD_FORMS)
    try:
        if m := re.fullmatch(r"(\d{4})", s):
            y = _year(m[1], where)
            return Period(raw.strip(), f"calendar year {y}", date(y, 1, 1), date(y + 1, 1, 1))
        if m := re.fullmatch(r"FY(\d{4})-(\d{1,2})", s):
            y, mo = _year(m[1], where), int(m[2])
            if not 1 <= mo <= 12:
                raise InputError(where, raw, "the financial year's start month is 1 to 12, e.g. FY2026-04")
            start = date(y, mo, 1)
            end = _add_months(y, mo, 12)
            last = _add_months(y, mo, 11)
            label = (
                f"calendar year {y}"
                if mo == 1
                else f"financial year {_MONTH_NAMES[mo - 1]} {y} to {_MONTH_NAMES[last.month - 1]} {last.year}"
            )
            return Period(raw.strip(), label, start, end)
        if m := re.fullmatch(r"(\d{4})Q([1-4])", s):
            y, q = _year(m[1], where), int(m[2])
            start = date(y, 3 * (q - 1) + 1, 1)
            return Period(
                raw.strip(),
                f"{y} quarter {q} ({_MONTH_NAMES[start.month - 1]} to {_MONTH_NAMES[start.month + 1]})",
                start,
                _add_months(y, start.month, 3),
            )
        if m := re.fullmatch(r"(\d{4})-(\d{1,2})", s):
            y, mo = _year(m[1], where), int(m[2])
            if not 1 <= mo <= 12:
                raise InputError(where, raw, "a month is 1 to 12, e.g. 2026-03")
            return Period(raw.strip(), f"{_MONTH_NAMES[mo - 1]} {y}", date(y, mo, 1), _add_months(y, mo, 1))
        if m := re.fullmatch(r"(\d{4}-\d{1,2}-\d{1,2})\.\.(\d{4}-\d{1,2}-\d{1,2})", s):
            a, b = (date.fromisoformat(_iso(x)) for x in (m[1], m[2]))
            _year(str(a.year), where), _year(str(b.year), where)
            if b < a:
                raise InputError(where, raw, "the range ends before it starts; write FIRST..LAST")
            return Period(raw.strip(), f"{a.isoformat()} to {b.isoformat()}", a, b + timedelta(days=1))
    except ValueError:
        raise InputError(where, raw, "not a real date; " + allowed) from None
    raise InputError(where, raw, allowed)


def _iso(text: str) -> str:
    y, m, d = text.split("-")
    return f"{y}-{int(m):02d}-{int(d):02d}"


def month_shares(period: Period) -> dict[str, float]:
    """Share of each calendar month (YYYY-MM) that lies inside the period [1].

    Whole months give 1.0; the first and last month of a date range give their share of
    days. Used to count monthly purchases in a period.
    """
    out: dict[str, float] = {}
    d = date(period.start.year, period.start.month, 1)
    while d < period.end:
        nxt = _add_months(d.year, d.month, 1)
        inside = (min(nxt, period.end) - max(d, period.start)).days
        out[f"{d.year:04d}-{d.month:02d}"] = inside / (nxt - d).days
        d = nxt
    return out
