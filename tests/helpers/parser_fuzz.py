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


# --------------------------------------------------------------------------------------
# Record sets whose totals are known: times in zones and across clock changes, 12-hour
# times, trailing text, digit separators, unnamed and repeated columns, case ids reused
# in other files. Each comes with its expected totals, a plain-Python sum over the rows
# generated, which the audit must equal.

#: Zones with clock changes (the IANA database, through zoneinfo, is the reference):
#: London and New York (one hour), Lord Howe Island (half an hour), Kolkata (none, +05:30).
ZONES = ("Europe/London", "America/New_York", "Australia/Lord_Howe", "Asia/Kolkata")
#: Instants near the clock changes of 2025 in those zones (UTC), and a plain day.
NEAR_CHANGES = (
    "2025-03-30T00:20:00",  # London forward at 01:00 UTC
    "2025-10-26T00:20:00",  # London back at 01:00 UTC
    "2025-03-09T06:20:00",  # New York forward at 07:00 UTC
    "2025-11-02T05:20:00",  # New York back at 06:00 UTC
    "2025-04-05T14:20:00",  # Lord Howe back half an hour at 15:00 UTC
    "2025-07-15T09:00:00",
)
#: Cell texts that are no time by the documented grammar (docs/formats.md, "Times in records").
BAD_TIME_TAILS = (" not a time", "+25:00", " Mars/Base", "x", " Europe/London", "-13:00", "+01:75", " UTC")
#: Flow texts that are no number by the documented grammar (docs/formats.md, "Numbers in files").
BAD_NUMBERS = ("1_5", "0_5", '"1,5"', "1 5", "０.5", "0x1", "inf", "nan", "1e", "--1")
#: Flows written in every good row: exact in binary, so the plain sums are exact too. [L/min]
FLOWS = (0.0, 0.25, 0.5, 1.0, 2.0)


def _written_time(instant, zone: str, form: str) -> str:
    """An instant written with its offset in ``zone`` (zoneinfo), in one of the documented forms."""
    import zoneinfo

    local = instant.astimezone(zoneinfo.ZoneInfo(zone))
    off = local.utcoffset()
    minutes = int(off.total_seconds() // 60)
    sign = "+" if minutes >= 0 else "-"
    hh, mm = divmod(abs(minutes), 60)
    offset = {"colon": f"{sign}{hh:02d}:{mm:02d}", "plain": f"{sign}{hh:02d}{mm:02d}"}
    if form == "z":
        return instant.astimezone(__import__("datetime").UTC).strftime("%Y-%m-%dT%H:%M:%SZ")
    if form == "12h":
        return local.strftime("%Y-%m-%d %I:%M:%S %p") + offset["colon"]
    sep = "T" if form == "iso" else " "
    return local.strftime(f"%Y-%m-%d{sep}%H:%M:%S") + offset["plain" if form == "plain" else "colon"]


def _naive_in_zone(instant, zone: str) -> str:
    import zoneinfo

    return instant.astimezone(zoneinfo.ZoneInfo(zone)).strftime("%Y-%m-%d %H:%M:%S")


def _ambiguous_or_missing(text: str, zone: str) -> bool:
    """Whether a naive wall-clock time is shown twice or never in ``zone`` (zoneinfo)."""
    import datetime as dt
    import zoneinfo

    tz = zoneinfo.ZoneInfo(zone)
    wall = dt.datetime.fromisoformat(text)
    return wall.replace(tzinfo=tz, fold=0).utcoffset() != wall.replace(tzinfo=tz, fold=1).utcoffset()


@st.composite
def known_record_sets(draw):
    """CSV record files with odd but documented input and bad rows among good ones, and their totals.

    Returns
    -------
    dict
        ``files`` (name, text), ``time_zone`` (the setting, or None), ``bad`` (rows that
        must be set aside), ``cases`` (expected cases), ``minutes``, ``oxygen_l``, ``air_l``
        (plain sums over the good rows: each good sample holds until the next good one).
    """
    import datetime as dt

    zone_setting = draw(st.sampled_from([None, *ZONES[:3]]))
    header_style = draw(st.sampled_from(["plain", "trailing", "repeated", "unnamed"]))
    header = "case_id,time,theatre,agent,o2,air,dial"
    extra = {"plain": "", "trailing": ",", "repeated": ",note,note", "unnamed": ",,note"}[header_style]
    n_files = draw(st.integers(1, 3))
    reuse = draw(st.booleans())  # every file numbers its one case "1" (other theatre, other day)
    files, bad, minutes, oxygen, air, n_cases = [], 0, 0.0, 0.0, 0.0, 0
    for f in range(n_files):
        start = dt.datetime.fromisoformat(draw(st.sampled_from(NEAR_CHANGES))).replace(tzinfo=dt.UTC)
        start += dt.timedelta(days=400 * f)  # files on other days: a reused id is another case
        lines = []
        good = []  # (instant, o2, air) of the good rows in file order
        t = start
        for _ in range(draw(st.integers(2, 14))):
            t = t + dt.timedelta(minutes=draw(st.integers(1, 3)))
            o2, air_flow = draw(st.sampled_from(FLOWS)), draw(st.sampled_from(FLOWS))
            o2_text = repr(o2)
            if zone_setting is not None and draw(st.booleans()):
                when = _naive_in_zone(t, zone_setting)
                is_bad = _ambiguous_or_missing(when, zone_setting)
            else:
                when = _written_time(
                    t, draw(st.sampled_from(ZONES)), draw(st.sampled_from(["iso", "space", "plain", "z", "12h"]))
                )
                is_bad = False
            spoil = draw(st.sampled_from(["none"] * 6 + ["time", "number"]))
            if spoil == "time":
                when += draw(st.sampled_from(BAD_TIME_TAILS))
                is_bad = True
            elif spoil == "number":
                o2_text = draw(st.sampled_from(BAD_NUMBERS))
                is_bad = True
            case = "1" if reuse else f"F{f}"
            theatre = ("Alder", "Birch", "Cedar")[f]
            fill = {"plain": "", "trailing": ",", "repeated": ",a,b", "unnamed": ",,b"}[header_style]
            lines.append(f"{case},{when},{theatre},sevoflurane,{o2_text},{air_flow!r},2{fill}")
            if is_bad:
                bad += 1
            else:
                good.append((t, o2, air_flow))
        for (t0, o2, air_flow), (t1, _, _) in zip(good, good[1:], strict=False):
            dt_min = (t1 - t0).total_seconds() / 60.0
            minutes += dt_min
            oxygen += o2 * dt_min
            air += air_flow * dt_min
        n_cases += 1 if good else 0
        files.append((f"day-{f}.csv", header + extra + "\n" + "\n".join(lines) + "\n"))
    return {
        "files": files,
        "time_zone": zone_setting,
        "bad": bad,
        "cases": n_cases,
        "minutes": minutes,
        "oxygen_l": oxygen,
        "air_l": air,
    }


@st.composite
def known_purchase_files(draw):
    """A purchases CSV with odd headers (trailing empty column, repeated or unnamed column), and its bottles.

    Returns (text, bottles or None): None when the header must be refused (a column named
    twice, or one unnamed before the last); else the plain sum of the bottles of the good lines,
    and the count of lines that must be set aside (digit separators and other undocumented numbers).
    """
    style = draw(st.sampled_from(["plain", "trailing", "repeated", "unnamed"]))
    header = {
        "plain": "month,item,quantity,unit,size",
        "trailing": "month,item,quantity,unit,size,",
        "repeated": "month,item,quantity,Quantity ,unit,size",
        "unnamed": "month,item,,quantity,unit,size",
    }[style]
    lines, bottles, bad = [], 0, 0
    for k in range(draw(st.integers(1, 8))):
        qty = draw(st.integers(0, 40))
        text = str(qty)
        if draw(st.integers(0, 4)) == 0:
            text = draw(st.sampled_from(["1_0", '"1,0"', "1 0", "１", "0x1", "inf", "nan", "1e"]))
            bad += 1
        else:
            bottles += qty
        month = f"2025-{k % 12 + 1:02d}"
        if style == "trailing":
            lines.append(
                f"{month},sevoflurane,{text},bottle,," if draw(st.booleans()) else f"{month},sevoflurane,{text},bottle,"
            )
        elif style in ("repeated", "unnamed"):
            lines.append(f"{month},sevoflurane,{text},{text},bottle,")
        else:
            lines.append(f"{month},sevoflurane,{text},bottle,")
    refused = style in ("repeated", "unnamed")
    return header + "\n" + "\n".join(lines) + "\n", (None if refused else (bottles, bad))


def no_nan_or_inf(value) -> bool:
    """Whether a JSON-like value (dicts, lists, numbers, text) holds no nan or inf anywhere."""
    import math

    if isinstance(value, float):
        return math.isfinite(value)
    if isinstance(value, dict):
        return all(no_nan_or_inf(v) for v in value.values())
    if isinstance(value, (list, tuple)):
        return all(no_nan_or_inf(v) for v in value)
    if isinstance(value, str):
        return "nan" not in value.lower().split() and "inf" not in value.lower().split()
    return True
