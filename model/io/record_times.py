"""Times in case records: the documented grammar, UTC offsets and the time zone of times written without one.

A time cell is read by one grammar (docs/formats.md, "Times in records"): a date
``YYYY-MM-DD``, then optionally ``T`` or a space and a time of the clock ``HH:MM[:SS[.f]]``
(24-hour, or 1-12 followed by ``AM``/``PM``), then optionally a UTC offset (``Z``,
``+01:00``, ``-0500``, ``+01``, from -12:00 to +14:00). Anything else, trailing text
included, is a bad time. A time with an offset is the instant it names; a time without
one is read in the time zone the user sets (the ``time_zone`` setting, an IANA zone name
such as ``Europe/London``), or as written when none is set. In that zone a time the
clocks show twice (the hour repeated when they go back) or never (the hour skipped when
they go forward) is a bad time: only its offset can say which instant it is.

The conversions are SQL for duckdb (its ICU time zones), so files larger than memory are
read the same way; :func:`explain_bad_time` says in Python, for the messages, why a cell
is a bad time (with the zoneinfo database).
"""

from __future__ import annotations

import functools
import re

from model.base.errors import InputError

#: The grammar of a time cell (see the module docstring): date, clock time, 12-hour half, offset.
TIME_GRAMMAR = (
    r"([0-9]{4}-[0-9]{2}-[0-9]{2})"
    r"(?:[T ]([0-9]{1,2}):([0-9]{2})(?::([0-9]{2})(?:\.([0-9]{1,9}))?)?"
    r"(?: ?([AaPp][Mm]))?"
    r"(?: ?(Z|[+-][0-9]{2}(?::?[0-9]{2})?))?)?"
)
_GROUPS = ("day", "hour", "minute", "second", "fraction", "half", "offset")
_TIME = re.compile(TIME_GRAMMAR)
#: Smallest and largest UTC offset in use. [min] The IANA time zone database: from UTC-12:00
#: (Baker Island) to UTC+14:00 (Kiribati, Line Islands).
MIN_OFFSET_MIN, MAX_OFFSET_MIN = -12 * 60, 14 * 60
#: Beyond any UTC offset [ms]: the offsets at this distance either side of a wall-clock time
#: are those before and after the one clock change that can be near it.
_SPAN_MS = 15 * 3600 * 1000


def check_time_zone(name) -> str | None:
    """The time zone for times written without an offset: an IANA zone name, or None.

    Raises
    ------
    InputError
        The name is not a zone of the IANA time zone database (``zoneinfo``) or of duckdb's.
    """
    if name is None or (isinstance(name, str) and not name.strip()):
        return None
    allowed = "expected a zone of the IANA time zone database such as Europe/London or UTC"
    if not isinstance(name, str) or not name.isprintable() or len(name) > 64 or name != name.strip():
        raise InputError("time zone", name, allowed)
    known = _known_zone(name)
    if known is not None:
        raise InputError("time zone", name, allowed + known)
    return name


@functools.lru_cache(maxsize=64)
def _known_zone(name: str) -> str | None:
    """None when both zoneinfo and duckdb know the zone ``name``; else what to add to the message."""
    import zoneinfo

    import duckdb

    try:
        zoneinfo.ZoneInfo(name)
    except (zoneinfo.ZoneInfoNotFoundError, ValueError, OSError):
        return ""
    try:
        duckdb.execute(f"SELECT timezone({_q(name)}, TIMESTAMPTZ '2025-01-01 00:00:00+00')").fetchall()
    except duckdb.Error:
        return " (this one is unknown to the records reader)"
    return None


def _q(text: str) -> str:
    return "'" + text.replace("'", "''") + "'"


def text_time_levels(cell: str) -> list[str]:
    """Columns to add, level by level, for a text time cell (``cell``: trimmed text or NULL).

    Each entry is the column list of one ``SELECT *, ... FROM (previous)`` around the
    file's source; the last level gives ``__gl_local`` (the wall-clock time, TIMESTAMP) and
    ``__gl_offset`` (the UTC offset written, minutes, NULL without one).
    """
    names = "[" + ", ".join(_q(g) for g in _GROUPS) + "]"
    pattern = _q("^" + TIME_GRAMMAR + "$")
    m = "__gl_m"
    h = f"TRY_CAST(NULLIF({m}.hour, '') AS INTEGER)"
    half = f"upper({m}.half)"
    h24 = f"CASE WHEN {half} = '' THEN {h} WHEN {half} = 'AM' THEN {h} % 12 ELSE {h} % 12 + 12 END"
    zz = f"replace({m}.offset, ':', '')"
    offset = (
        f"CASE WHEN {m}.offset = '' THEN NULL WHEN {m}.offset = 'Z' THEN 0 ELSE "
        f"(CASE WHEN left({zz}, 1) = '-' THEN -1 ELSE 1 END) * (CAST(substr({zz}, 2, 2) AS INTEGER) * 60 "
        f"+ CASE WHEN length({zz}) = 5 THEN CAST(substr({zz}, 4, 2) AS INTEGER) ELSE 0 END) END"
    )
    ok = (
        f"{m}.day <> '' AND ({h} IS NULL OR ({half} = '' AND {h} <= 23) OR ({half} <> '' AND {h} BETWEEN 1 AND 12)) "
        f"AND coalesce(TRY_CAST(NULLIF({m}.minute, '') AS INTEGER), 0) <= 59 "
        f"AND coalesce(TRY_CAST(NULLIF({m}.second, '') AS INTEGER), 0) <= 59 "
        f"AND ({m}.offset IN ('', 'Z') OR (coalesce(TRY_CAST(substr({zz}, 4, 2) AS INTEGER), 0) <= 59 "
        f"AND ({offset}) BETWEEN {MIN_OFFSET_MIN} AND {MAX_OFFSET_MIN}))"
    )
    text = (
        f"CASE WHEN {m}.hour = '' THEN {m}.day ELSE {m}.day || ' ' || lpad(CAST({h24} AS VARCHAR), 2, '0') || ':' "
        f"|| {m}.minute || ':' || coalesce(NULLIF({m}.second, ''), '00') "
        f"|| CASE WHEN {m}.fraction <> '' THEN '.' || {m}.fraction ELSE '' END END"
    )
    return [
        f"regexp_extract(coalesce({cell}, ''), {pattern}, {names}) AS {m}",
        f"CASE WHEN {ok} THEN TRY_CAST({text} AS TIMESTAMP) END AS __gl_local, "
        f"CASE WHEN {ok} THEN {offset} END AS __gl_offset",
    ]


def _tstz(ms: str) -> str:
    """SQL: the instant ``ms`` milliseconds after 1970-01-01 00:00 UTC, as a TIMESTAMPTZ."""
    return f"timezone('UTC', make_timestamp(({ms}) * 1000))"


def _offset_ms(zone: str, ms: str) -> str:
    """SQL: the UTC offset of ``zone`` at the instant ``ms`` [ms]."""
    return f"(epoch_ms(timezone({_q(zone)}, {_tstz(ms)})) - ({ms}))"


def zone_levels(local: str, zone: str | None) -> list[str]:
    """Columns to add, after the wall-clock time ``local`` is known, to read it in ``zone``.

    Gives ``__gl_before`` and ``__gl_after``: the zone's UTC offsets [ms] 15 hours either
    side of the wall-clock time (the same unless a clock change is near).
    """
    if zone is None:
        return []
    lms = f"epoch_ms({local})"
    return [
        f"{_offset_ms(zone, f'{lms} - {_SPAN_MS}')} AS __gl_before, "
        f"{_offset_ms(zone, f'{lms} + {_SPAN_MS}')} AS __gl_after"
    ]


def instant_ms(local: str, offset_min: str | None, zone: str | None) -> str:
    """SQL: milliseconds since 1970 UTC of a wall-clock time (NULL where it names no one instant).

    ``offset_min`` is the offset written with the time (SQL, minutes, NULL without one);
    without it the time is read in ``zone`` (after :func:`zone_levels`), or as written
    when ``zone`` is None. In ``zone``, a time that the clocks show twice or never is NULL.
    """
    lms = f"epoch_ms({local})"
    if zone is None:
        naive = lms
    else:
        b, a = "__gl_before", "__gl_after"
        fits_b = f"{_offset_ms(zone, f'{lms} - {b}')} = {b}"
        fits_a = f"{_offset_ms(zone, f'{lms} - {a}')} = {a}"
        naive = (
            f"CASE WHEN {b} = {a} THEN {lms} - {b} WHEN {fits_b} AND {fits_a} THEN NULL "
            f"WHEN {fits_b} THEN {lms} - {b} WHEN {fits_a} THEN {lms} - {a} END"
        )
    if offset_min is None:
        return naive
    return f"CASE WHEN {offset_min} IS NOT NULL THEN {lms} - {offset_min} * 60000 ELSE {naive} END"


def stored_zone_local(col: str, arrow_tz: str) -> str:
    """SQL: the wall-clock time of a TIMESTAMPTZ column in the zone the file stores with it.

    ``arrow_tz`` is the zone of the Parquet column (an IANA name or an offset such as
    ``+01:00``); the connection's own zone is UTC, so nothing depends on the server's.
    """
    m = re.fullmatch(r"([+-])([0-9]{2}):?([0-9]{2})", arrow_tz or "")
    if m:
        minutes = (1 if m.group(1) == "+" else -1) * (int(m.group(2)) * 60 + int(m.group(3)))
        return f"(CAST({col} AS TIMESTAMP) + INTERVAL ({minutes}) MINUTE)"
    try:
        check_time_zone(arrow_tz)
    except InputError:
        return f"CAST({col} AS TIMESTAMP)"  # no zone, or one unknown: UTC
    return f"timezone({_q(arrow_tz)}, {col})" if arrow_tz else f"CAST({col} AS TIMESTAMP)"


def explain_bad_time(text: str, zone: str | None) -> str:
    """Why a time cell is a bad time, in words for a message (zoneinfo as the reference)."""
    example = "expected a date-time such as 2025-03-04 08:15:00, with an optional UTC offset (+01:00, Z)"
    m = _TIME.fullmatch(str(text).strip())
    if not m:
        return example + " (docs/formats.md, 'Times in records')"
    day, hour, minute, second, _, half, offset = m.groups()
    import datetime as dt

    try:
        date = dt.date.fromisoformat(day)
    except ValueError:
        return f"{day} is not a date of the calendar; {example}"
    if hour is not None:
        h = int(hour)
        if half and not 1 <= h <= 12:
            return f"hour {h} with {half.upper()}: a 12-hour time runs from 1 to 12"
        if not half and h > 23 or int(minute) > 59 or int(second or 0) > 59:
            return f"not a time of the clock; {example}"
    if offset and offset != "Z":
        zz = offset.replace(":", "")
        minutes = int(zz[1:3]) * 60 + int(zz[3:5] or 0)
        if int(zz[3:5] or 0) > 59 or not MIN_OFFSET_MIN <= (-minutes if zz[0] == "-" else minutes) <= MAX_OFFSET_MIN:
            return f"UTC offset {offset} is not one in use (from -12:00 to +14:00)"
    if zone is not None and not offset:
        import zoneinfo

        tz = zoneinfo.ZoneInfo(zone)
        h = 0 if hour is None else int(hour) % 12 + (12 if (half or "").upper() == "PM" else 0) if half else int(hour)
        wall = dt.datetime(date.year, date.month, date.day, h, int(minute or 0), int(second or 0))
        first, second_ = wall.replace(tzinfo=tz, fold=0), wall.replace(tzinfo=tz, fold=1)
        if first.utcoffset() != second_.utcoffset():
            back = first.astimezone(dt.UTC).astimezone(tz).replace(tzinfo=None)
            if back != wall:
                return f"the clocks of {zone} skip this time (they go forward); give its UTC offset"
            return f"the clocks of {zone} show this time twice (they go back); give its UTC offset, e.g. +01:00"
    return example
