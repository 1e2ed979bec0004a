"""Case records: the project's own long-form sample format, read and checked with duckdb.

A record file holds one row per sample of a case (CSV or Parquet; the format is documented
in README.md, "Case records"). Columns are recognised by name; a unit is declared in the
column name (``o2 [mL/min]``) or, in CSV, in a leading header line (``# units: o2=mL/min``)
and converted with pint once per column. Every row passes the checks below; a row that
fails one is set aside with a row-numbered message, every other row is used. All checks
run as vectorised duckdb SQL, so the same code reads one small file or a glob of Parquet
files far larger than memory.

Row-level problems (``ISSUE_KINDS``), in the order they are checked:

=================  ================================================================
encoding           the CSV line is not valid UTF-8
field_count        the CSV line has more or fewer fields than the header
unreadable         the CSV line cannot be parsed (e.g. an unclosed quote)
text_in_number     a number column holds text
bad_time           the time cell is not a date-time
missing_value      case id, time, agent, every flow, or the dial/end-tidal of a
                   volatile agent is empty
unknown_agent      the agent is not one of the reference agents (or "none")
negative_flow      a flow is below zero
absurd_flow        a flow above 20 L/min or a total above 30 L/min
absurd_setting     a dial, end-tidal or O2/N2O share outside what is possible
duplicate_time     the same time as an earlier sample of the case
time_backwards     a time earlier than an earlier sample of the case (file order)
=================  ================================================================

Gaps (two samples of a case further apart than ``gap_limit_min``) are reported, not
filled: the interval is left out of every sum, and the rows on both sides are kept.
"""

from __future__ import annotations

import os
import re
import tempfile
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable, Iterable, Sequence

import numpy as np
import pandas as pd

from .errors import InputError
from .freshgas import FLOW_BANDS
from .reference import AIR_O2_FRACTION, DEFAULT_REFERENCE, Reference, normalise_agent_name
from .units import registry, safe_quantity_text

RECORD_FORMATS = ("csv", "parquet")

#: Canonical fields: name -> (base unit or kind, accepted names (lower case, before any unit)).
FIELDS = {
    "case_id": ("text", ("case_id", "case", "case id", "caseid")),
    "time": ("timestamp", ("time", "timestamp", "sample_time", "date_time", "datetime")),
    "elapsed": ("min", ("elapsed", "elapsed_min", "minutes", "minute", "elapsed_time")),
    "date": ("date", ("date", "case_date")),
    "theatre": ("text", ("theatre", "theater", "location", "room", "theatre_id")),
    "agent": ("text", ("agent", "volatile", "volatile_agent")),
    "o2": ("L/min", ("o2", "oxygen", "o2_flow", "o2_l_min")),
    "air": ("L/min", ("air", "air_flow", "air_l_min")),
    "n2o": ("L/min", ("n2o", "nitrous_oxide", "n2o_flow", "n2o_l_min")),
    "fgf": ("L/min", ("fgf", "total_flow", "fresh_gas_flow", "fgf_l_min")),
    "o2_share": ("percent", ("o2_share", "o2_share_pct", "fd_o2", "fdo2")),
    "n2o_share": ("percent", ("n2o_share", "n2o_share_pct", "fd_n2o")),
    "dial": ("percent", ("dial", "dial_pct", "vaporizer", "dial_setting")),
    "end_tidal": ("percent", ("end_tidal", "end_tidal_pct", "et_agent", "etagent")),
}
NUMBER_FIELDS = ("elapsed", "o2", "air", "n2o", "fgf", "o2_share", "n2o_share", "dial", "end_tidal")
_ALIAS_TO_FIELD = {alias: name for name, (_, aliases) in FIELDS.items() for alias in aliases}

ISSUE_KINDS = ("encoding", "field_count", "unreadable", "text_in_number", "bad_time",
               "missing_value", "unknown_agent", "negative_flow", "absurd_flow",
               "absurd_setting", "duplicate_time", "time_backwards")

#: Highest single flowmeter flow accepted. [L/min] Common practice, no source (the same
#: limit as plan files; workstation flowmeters end at 10-15 L/min, the flush is not a flow).
MAX_FLOW_L_MIN = 20.0
#: Highest total fresh gas flow accepted. [L/min] Common practice, no source (as plan files).
MAX_TOTAL_FLOW_L_MIN = 30.0
#: Default longest interval between two samples of a case that is integrated. [min]
#: Common practice, no source: minute-level exports rarely miss more than a few samples.
DEFAULT_GAP_LIMIT_MIN = 5.0
#: Most row-level messages kept in a report (counts are always complete).
DEFAULT_MAX_MESSAGES = 2000

_UNITS_LINE = re.compile(r"^\s*#\s*units?\s*:\s*(.*)$", re.IGNORECASE)
_NAME_UNIT = re.compile(r"^\s*(.*?)\s*[\[(]\s*(.+?)\s*[\])]\s*$")
_NUMERIC_TYPES = ("DOUBLE", "FLOAT", "REAL", "INTEGER", "BIGINT", "SMALLINT", "TINYINT", "HUGEINT",
                  "UBIGINT", "UINTEGER", "USMALLINT", "UTINYINT", "DECIMAL")


@dataclass(frozen=True)
class Column:
    """One source column mapped to a canonical field."""

    field: str
    source: str
    #: Multiply the source number by this to get the base unit (1 for text and times).
    factor: float = 1.0
    #: The unit as declared ("" for the default unit).
    unit: str = ""


@dataclass
class RecordFile:
    """What a record file holds: its format, its columns and how each maps to a field."""

    path: str
    format: str
    columns: dict[str, Column]
    #: Source column names not recognised (ignored, named in the report).
    ignored: list[str] = field(default_factory=list)
    #: Lines before the header row (CSV only).
    skip_lines: int = 0
    #: duckdb type of each source column.
    types: dict[str, str] = field(default_factory=dict)

    @property
    def flow_mode(self) -> str:
        return "parts" if any(k in self.columns for k in ("o2", "air", "n2o")) else "total"

    @property
    def row_label(self) -> str:
        return "line" if self.format == "csv" else "row"


@dataclass
class ReadReport:
    """Counts and row-numbered messages from reading and checking records."""

    files: list[str]
    rows_read: int = 0
    rows_valid: int = 0
    #: Rows set aside, by issue kind (every kind of ``ISSUE_KINDS`` present, zeros included).
    set_aside: dict[str, int] = field(default_factory=lambda: {k: 0 for k in ISSUE_KINDS})
    #: Row-level messages (file, row, kind, column, value, message); at most ``max_messages``.
    issues: pd.DataFrame = field(default_factory=lambda: pd.DataFrame(
        columns=["file", "row", "kind", "column", "value", "message"]))
    gaps: int = 0
    gap_minutes: float = 0.0
    #: One row per gap (file, row, case_id, from_min, to_min, minutes, message); capped.
    gap_list: pd.DataFrame = field(default_factory=lambda: pd.DataFrame(
        columns=["file", "row", "case_id", "minutes", "message"]))
    notes: list[str] = field(default_factory=list)
    gap_limit_min: float = DEFAULT_GAP_LIMIT_MIN

    @property
    def rows_set_aside(self) -> int:
        return int(sum(self.set_aside.values()))

    def summary(self) -> dict:
        """Plain-dict form with stable keys (for JSON)."""
        return {
            "files": list(self.files),
            "rows_read": int(self.rows_read),
            "rows_valid": int(self.rows_valid),
            "rows_set_aside": self.rows_set_aside,
            "set_aside_by_kind": {k: int(v) for k, v in self.set_aside.items()},
            "gaps": int(self.gaps),
            "gap_minutes_not_counted": float(self.gap_minutes),
            "gap_limit_min": float(self.gap_limit_min),
            "messages_shown": int(len(self.issues)),
            "notes": list(self.notes),
        }


# --------------------------------------------------------------------------------------
# Columns and units


def _unit_factor(unit: str, base: str, where: str) -> float:
    """Factor from ``unit`` to ``base`` through the package's pint registry."""
    ureg = registry()
    text = unit.strip()
    if text in ("%", "pct", "percent"):
        text = "percent"
    if text.lower() in ("fraction", "1", "ratio"):
        text = "dimensionless"
    try:
        if not safe_quantity_text(text):  # pint would evaluate "9**9**9" for hours
            raise ValueError(text)
        return float(ureg.Quantity(1.0, text).to(base).magnitude)
    except Exception:
        raise InputError(where, unit, f"expected a unit convertible to {base.replace('percent', '%')}") from None


def _parse_units_line(line: str, where: str) -> dict[str, str]:
    m = _UNITS_LINE.match(line)
    if not m:
        return {}
    out = {}
    for part in re.split(r"[;,]", m.group(1)):
        if not part.strip():
            continue
        if "=" not in part:
            raise InputError(where, part.strip(), "expected 'column=unit' pairs, e.g. '# units: o2=mL/min'")
        name, unit = (s.strip() for s in part.split("=", 1))
        if name.lower() in out:
            raise InputError(where, part.strip(), f"the unit of '{name}' is given twice; give it once")
        out[name.lower()] = unit
    return out


def map_columns(names: Sequence[str], declared: dict[str, str], where: str):
    """Map source column names to canonical fields with unit factors.

    Returns
    -------
    columns : dict[str, Column]
    ignored : list[str]
    """
    columns: dict[str, Column] = {}
    ignored = []
    for src in names:
        m = _NAME_UNIT.match(src)
        name, unit = (m.group(1), m.group(2)) if m else (src.strip(), "")
        key = name.lower().replace("-", "_")
        key = _ALIAS_TO_FIELD.get(key, _ALIAS_TO_FIELD.get(key.replace(" ", "_")))
        if key is None:
            ignored.append(src)
            continue
        if key in columns:
            raise InputError(f"{where}: column '{src}'", src,
                             f"the field '{key}' already comes from column '{columns[key].source}'")
        base = FIELDS[key][0]
        unit = unit or declared.get(name.lower(), "") or declared.get(key, "")
        factor = 1.0
        if base in ("text", "timestamp", "date"):
            if unit:
                raise InputError(f"{where}: column '{src}'", unit, "this column takes no unit")
        elif unit:
            factor = _unit_factor(unit, base, f"{where}: unit of column '{src}'")
        columns[key] = Column(key, src, factor, unit)
    unknown_declared = [k for k in declared
                        if k not in {c.source.lower() for c in columns.values()}
                        and k not in columns and _NAME_UNIT.sub(r"\1", k) not in
                        {(_NAME_UNIT.match(c.source).group(1) if _NAME_UNIT.match(c.source) else c.source).lower()
                         for c in columns.values()}]
    if unknown_declared:
        raise InputError(f"{where}: units line", unknown_declared[0], "names no column of the file")
    _require(columns, where)
    return columns, ignored


def _require(columns: dict[str, Column], where: str) -> None:
    missing = []
    if "case_id" not in columns:
        missing.append("case_id")
    if "time" not in columns and "elapsed" not in columns:
        missing.append("time or elapsed")
    if "agent" not in columns:
        missing.append("agent")
    has_parts = any(k in columns for k in ("o2", "air", "n2o"))
    if not has_parts and not ("fgf" in columns and "o2_share" in columns):
        missing.append("o2/air/n2o flows, or fgf with o2_share")
    if missing:
        raise InputError(f"{where}: columns", ", ".join(columns[k].source for k in columns) or "none",
                         "missing required column(s): " + "; ".join(missing) + " (see README, 'Case records')")


def inspect_file(path) -> RecordFile:
    """Read the header of a record file and map its columns (no data rows are read).

    Raises
    ------
    InputError
        The file is missing or unreadable, is not CSV/Parquet, is UTF-16, declares an
        unknown unit, or lacks a required column.
    """
    p = Path(path)
    where = str(p)
    fmt = p.suffix.lower().lstrip(".")
    if fmt not in RECORD_FORMATS:
        raise InputError(where, p.suffix or "no extension", "record files end in .csv or .parquet")
    if not p.is_file():
        raise InputError(where, where, "the file does not exist" if not p.exists() else "expected a file")
    if fmt == "parquet":
        import pyarrow as pa
        import pyarrow.parquet as pq

        try:
            schema = pq.read_schema(p)
        except Exception as exc:
            raise InputError(where, "the file", f"not a readable Parquet file ({type(exc).__name__})") from None
        names = list(schema.names)
        columns, ignored = map_columns(names, {}, where)
        # A duration column is read as its integer count of s, ms, us or ns: give elapsed
        # its factor to minutes; any other field has no use for a duration.
        for key, col in list(columns.items()):
            ptype = schema.field(col.source).type
            if pa.types.is_duration(ptype):
                if key != "elapsed":
                    raise InputError(f"{where}: column '{col.source}'", str(ptype),
                                     "a duration fits only the elapsed column")
                seconds = {"s": 1.0, "ms": 1e-3, "us": 1e-6, "ns": 1e-9}[ptype.unit]
                columns[key] = Column(key, col.source, seconds / 60.0, ptype.unit)
        import duckdb

        described = duckdb.sql(f"DESCRIBE SELECT * FROM read_parquet({_sql_str(str(p))})").fetchall()
        types = {r[0]: r[1] for r in described}
        return RecordFile(where, fmt, columns, ignored, 0, types)
    with open(p, "rb") as fh:
        head = fh.read(65536)
    if head.startswith((b"\xff\xfe", b"\xfe\xff")) or (len(head) > 1 and head[1:2] == b"\x00"):
        raise InputError(where, "UTF-16 text", "save the file as UTF-8 text (CSV UTF-8)")
    if head.startswith(b"\xef\xbb\xbf"):
        head = head[3:]
    lines = head.split(b"\n")
    declared: dict[str, str] = {}
    skip = 0
    for raw in lines:
        text = raw.decode("utf-8", errors="replace").rstrip("\r")
        if text.lstrip().startswith("#"):
            declared.update(_parse_units_line(text, f"{where}, line {skip + 1}"))
            skip += 1
            continue
        if not text.strip():
            skip += 1
            continue
        break
    if skip >= len(lines) - 1 and len(head) == 65536:
        raise InputError(where, "no header row", "expected a header row near the top of the file")
    header_line = lines[skip].decode("utf-8", errors="replace").rstrip("\r") if skip < len(lines) else ""
    if not header_line.strip():
        raise InputError(where, "an empty file", "expected a header row with column names")
    import csv

    try:
        names = next(csv.reader([header_line]))
    except csv.Error as exc:
        raise InputError(f"{where}, line {skip + 1}", "the header row", f"not readable as CSV ({exc})") from None
    columns, ignored = map_columns(names, declared, where)
    return RecordFile(where, fmt, columns, ignored, skip, {n: "VARCHAR" for n in names})


def expand_paths(patterns: Iterable) -> list[str]:
    """Files named by paths or glob patterns, in order, each once.

    Raises
    ------
    InputError
        A pattern matches nothing.
    """
    import glob

    out: list[str] = []
    for pat in patterns:
        pat = str(pat)
        if any(ch in pat for ch in "*?["):
            found = sorted(glob.glob(pat, recursive=True))
            if not found:
                raise InputError("records", pat, "the pattern matches no file")
        elif os.path.isdir(pat):
            found = sorted(str(q) for q in Path(pat).iterdir() if q.suffix.lower() in (".csv", ".parquet"))
            if not found:
                raise InputError("records", pat, "the folder holds no .csv or .parquet file")
        else:
            found = [pat]
        for f in found:
            if f not in out:
                out.append(f)
    if not out:
        raise InputError("records", "no files", "give at least one record file")
    return out


# --------------------------------------------------------------------------------------
# SQL building


def _sql_str(text: str) -> str:
    return "'" + text.replace("'", "''") + "'"


def _ident(name: str) -> str:
    return '"' + name.replace('"', '""') + '"'


def _is_numeric(duck_type: str) -> bool:
    t = duck_type.upper()
    return any(t.startswith(n) for n in _NUMERIC_TYPES)


def _raw_select(rf: RecordFile, fileno: int, source_sql: str) -> str:
    """SELECT giving the canonical raw columns of one file (or a group with one schema)."""
    c = rf.columns
    parts = [f"{fileno} AS _fileno" if fileno >= 0 else "_fileno", "_row"]

    def text(fieldname):
        if fieldname not in c:
            return "NULL::VARCHAR"
        col = _ident(c[fieldname].source)
        return f"NULLIF(trim(CAST({col} AS VARCHAR)), '')"

    parts.append(f"{text('case_id')} AS case_id")
    parts.append(f"{text('theatre')} AS theatre")
    parts.append(f"{text('agent')} AS agent_raw")
    txt_checks = []
    for f in NUMBER_FIELDS:
        if f not in c:
            parts.append(f"NULL::DOUBLE AS {f}")
            continue
        col = _ident(c[f].source)
        factor = repr(float(c[f].factor))
        if _is_numeric(rf.types.get(c[f].source, "VARCHAR")):
            parts.append(f"CAST({col} AS DOUBLE) * {factor} AS {f}")
        else:
            s = f"NULLIF(trim(CAST({col} AS VARCHAR)), '')"
            parts.append(f"TRY_CAST({s} AS DOUBLE) * {factor} AS {f}")
            txt_checks.append((f, f"({s} IS NOT NULL AND TRY_CAST({s} AS DOUBLE) IS NULL)", s))
    # A number that is not finite ('inf', 'nan') counts as text in a number column.
    for f in NUMBER_FIELDS:
        if f in c and not any(t[0] == f for t in txt_checks):
            col = _ident(c[f].source)
            txt_checks.append((f, f"(NOT isfinite(CAST({col} AS DOUBLE)))",
                               f"CAST({col} AS VARCHAR)"))
        elif f in c:
            s = f"NULLIF(trim(CAST({_ident(c[f].source)} AS VARCHAR)), '')"
            txt_checks.append((f, f"(NOT isfinite(TRY_CAST({s} AS DOUBLE)))", s))
    if txt_checks:
        parts.append("CASE " + " ".join(f"WHEN {cond} THEN '{f}'" for f, cond, _ in txt_checks)
                     + " END AS txt_col")
        parts.append("CASE " + " ".join(f"WHEN {cond} THEN {val}" for f, cond, val in txt_checks)
                     + " END AS txt_val")
    else:
        parts.append("NULL::VARCHAR AS txt_col")
        parts.append("NULL::VARCHAR AS txt_val")
    # Time: a date-time column wins over elapsed minutes.
    if "time" in c:
        col = _ident(c["time"].source)
        ttype = rf.types.get(c["time"].source, "VARCHAR").upper()
        if ttype.startswith("TIMESTAMP") or ttype == "DATE":
            ts = f"CAST({col} AS TIMESTAMP)"
            parts.append(f"{ts} AS ts")
            parts.append("NULL::VARCHAR AS bad_time")
        else:
            s = f"NULLIF(trim(CAST({col} AS VARCHAR)), '')"
            parts.append(f"TRY_CAST({s} AS TIMESTAMP) AS ts")
            parts.append(f"CASE WHEN {s} IS NOT NULL AND TRY_CAST({s} AS TIMESTAMP) IS NULL THEN {s} END AS bad_time")
    else:
        parts.append("NULL::TIMESTAMP AS ts")
        if "date" in c:
            col = _ident(c["date"].source)
            s = f"NULLIF(trim(CAST({col} AS VARCHAR)), '')"
            parts.append(f"CASE WHEN {s} IS NOT NULL AND TRY_CAST({s} AS DATE) IS NULL THEN {s} END AS bad_time")
            parts.append(f"CAST(TRY_CAST({s} AS DATE) AS TIMESTAMP) AS day")
        else:
            parts.append("NULL::VARCHAR AS bad_time")
    if "time" in c or "date" not in c:
        parts.append("NULL::TIMESTAMP AS day")
    parts.append(f"{1 if rf.flow_mode == 'parts' else 0} AS parts_mode")
    parts.append(f"{1 if 'time' in c else 0} AS has_ts")
    return f"SELECT {', '.join(parts)} FROM {source_sql}"


def _band_sql(expr: str) -> str:
    """SQL CASE giving the flow band name of ``expr`` [L/min], from ``model.freshgas.FLOW_BANDS``."""
    whens = " ".join(f"WHEN {expr} <= {upper!r} THEN {_sql_str(name)}"
                     for name, upper in FLOW_BANDS[:-1])
    return f"CASE {whens} ELSE {_sql_str(FLOW_BANDS[-1][0])} END"


# --------------------------------------------------------------------------------------
# Reading


@dataclass
class Records:
    """Checked records held as a duckdb view, with the report of the reading.

    ``con`` is the duckdb connection; the view ``checked`` has one row per sample read
    (``problem`` NULL for valid rows) and ``valid`` the valid samples with ``dt_min``
    (minutes the sample holds, 0 for the last sample of a case and over a gap), ``gap``,
    ``fgf``, ``dose_pct`` and ``band``.
    """

    con: object
    files: list[RecordFile]
    report: ReadReport
    gap_limit_min: float
    reference: Reference = DEFAULT_REFERENCE
    _tmpdir: object = None

    def close(self) -> None:
        """Close the duckdb connection and remove its spill folder."""
        import shutil

        try:
            self.con.close()
        finally:
            if self._tmpdir:
                shutil.rmtree(self._tmpdir, ignore_errors=True)


def connect(memory_limit: str | None = None, threads: int | None = None):
    """A duckdb connection with bounded memory that spills to a temporary folder."""
    import duckdb

    tmp = tempfile.mkdtemp(prefix="gas-ledger-duckdb-")
    con = duckdb.connect(config={"temp_directory": tmp, "preserve_insertion_order": True})
    if memory_limit:
        try:
            con.execute(f"SET memory_limit = {_sql_str(memory_limit)}")
        except duckdb.Error:
            import shutil

            con.close()
            shutil.rmtree(tmp, ignore_errors=True)
            raise InputError("--memory-limit", memory_limit,
                             "a size with its unit, such as 3GB or 500MB") from None
    if threads:
        con.execute(f"SET threads = {int(threads)}")
    return con, tmp


def _csv_table(con, rf: RecordFile, index: int, report: ReadReport):
    """Read a CSV file as text columns with its line numbers; bad lines go to the report."""
    import pyarrow as pa

    rej = f"rejects_{index}"
    columns = "{" + ", ".join(f"{_sql_str(n)}: 'VARCHAR'" for n in rf.types) + "}"
    scan = f"rejects_scan_{index}"
    import duckdb

    try:
        rel = con.sql(
            f"SELECT * FROM read_csv({_sql_str(rf.path)}, all_varchar=true, header=true, "
            f"skip={rf.skip_lines}, delim=',', quote='\"', escape='\"', auto_detect=false, "
            f"columns={columns}, "
            f"store_rejects=true, rejects_table={_sql_str(rej)}, rejects_scan={_sql_str(scan)}, "
            f"strict_mode=true, null_padding=false)")
        table = rel.arrow()
    except duckdb.Error as exc:  # junk its rejects table cannot hold (e.g. a lone NUL before CR)
        first = (str(exc).strip().splitlines() or [type(exc).__name__])[0]
        raise InputError(rf.path, "the file", f"not readable as CSV ({first})") from None
    if hasattr(table, "read_all"):
        table = table.read_all()
    rejects = con.sql(f"SELECT line, min(error_type) AS error_type, any_value(csv_line) AS csv_line "
                      f"FROM {rej} GROUP BY line ORDER BY line").fetchall()
    # Line numbers of accepted rows: the non-blank lines after the header, less rejected lines.
    data = np.fromfile(rf.path, dtype=np.uint8)
    bom = 3 if data[:3].tobytes() == b"\xef\xbb\xbf" else 0
    nl = np.flatnonzero(data == 10)
    starts = np.concatenate(([bom], nl + 1))
    ends = np.concatenate((nl, [len(data)]))
    cr = (ends > starts) & (data[np.maximum(ends - 1, 0)] == 13)
    lengths = ends - starts - cr
    line_no = np.arange(1, len(starts) + 1)
    header_line = rf.skip_lines + 1
    candidate = line_no[(lengths > 0) & (line_no > header_line)]
    rejected = np.array([r[0] for r in rejects], dtype=np.int64)
    candidate = candidate[~np.isin(candidate, rejected)]
    if len(candidate) == table.num_rows:
        rows = candidate
    else:  # a quoted field spans lines: number records instead
        rows = np.arange(1, table.num_rows + 1) + header_line
        report.notes.append(f"{rf.path}: a quoted field spans lines; numbers shown are record numbers "
                            f"plus {header_line}, not line numbers")
    table = table.append_column("_row", pa.array(rows, type=pa.int64()))
    kinds = {"INVALID ENCODING": "encoding", "TOO MANY COLUMNS": "field_count",
             "MISSING COLUMNS": "field_count"}
    rej_rows = []
    for line, err, text in rejects:
        kind = kinds.get(err, "unreadable")
        if kind == "encoding":
            msg = "not valid UTF-8 text; save the file as UTF-8 (CSV UTF-8)"
        elif kind == "field_count":
            found = (text or "").count(",") + 1 if text else 0
            msg = f"expected {len(rf.types)} fields as in the header, found {found}"
        else:
            msg = f"cannot be read as CSV ({err.lower()})"
        rej_rows.append((rf.path, int(line), kind, None, None, f"{rf.path}: line {int(line)}: {msg}"))
    con.execute(f"DROP TABLE IF EXISTS {rej}; DROP TABLE IF EXISTS {scan}")
    return table, rej_rows


def read_records(paths, *, reference: Reference = DEFAULT_REFERENCE,
                 gap_limit_min: float = DEFAULT_GAP_LIMIT_MIN,
                 max_messages: int = DEFAULT_MAX_MESSAGES, memory_limit: str | None = None,
                 threads: int | None = None,
                 progress: Callable[[float, str], None] | None = None) -> Records:
    """Read and check record files (CSV and Parquet, globs allowed).

    Parameters
    ----------
    paths : iterable of path or glob
        Record files. Parquet files with the same columns are read as one columnar scan.
    reference : Reference
        Reference data (agent names, vaporizer maxima).
    gap_limit_min : float
        Longest interval between two samples of a case that is integrated. [min]
    max_messages : int
        Most row-level messages kept (counts are always complete).
    memory_limit : str, optional
        duckdb memory limit such as ``"3GB"``; beyond it duckdb spills to a temporary folder.
    threads : int, optional
        duckdb threads (default: all cores).
    progress : callable(fraction, text), optional
        Told of each step.

    Returns
    -------
    Records
        The checked records (duckdb views) and the reading report.

    Raises
    ------
    InputError
        A file cannot be read as records at all (missing, unknown format, UTF-16, unknown
        unit, missing required column). Row-level problems never raise: they are counted
        and described in ``Records.report``.
    """
    if not (isinstance(gap_limit_min, (int, float)) and np.isfinite(gap_limit_min) and gap_limit_min > 0):
        raise InputError("gap limit", gap_limit_min, "expected a positive number of minutes")
    step = progress or (lambda f, t: None)
    files = expand_paths(paths if not isinstance(paths, (str, os.PathLike)) else [paths])
    step(0.0, f"Reading the headers of {len(files)} file(s)")
    specs = [inspect_file(f) for f in files]
    con, tmp = connect(memory_limit, threads)
    report = ReadReport(files=[s.path for s in specs], gap_limit_min=float(gap_limit_min))
    for s in specs:
        if s.ignored:
            report.notes.append(f"{s.path}: ignored column(s) {', '.join(s.ignored)}")
    selects = []
    rej_rows: list = []
    # Parquet files with identical columns and types read as one scan.
    groups: dict = {}
    for i, s in enumerate(specs):
        if s.format == "parquet":
            key = tuple(sorted(s.types.items())) + tuple(sorted((k, c.source, c.factor) for k, c in s.columns.items()))
            groups.setdefault(key, []).append(i)
    for key, idx in groups.items():
        s = specs[idx[0]]
        names = "[" + ", ".join(_sql_str(specs[i].path) for i in idx) + "]"
        src = (f"(SELECT *, list_position({names}, filename) - 1 + 0 AS _grp, "
               f"file_row_number + 1 AS _row FROM read_parquet({names}, filename=true, file_row_number=true))")
        fileno_map = "CASE _grp " + " ".join(f"WHEN {j} THEN {i}" for j, i in enumerate(idx)) + " END"
        selects.append(_raw_select(s, -1, f"(SELECT *, {fileno_map} AS _fileno FROM {src})"))
    for i, s in enumerate(specs):
        if s.format != "csv":
            continue
        step(0.05 + 0.25 * i / max(len(specs), 1), f"Reading {Path(s.path).name}")
        table, rows = _csv_table(con, s, i, report)
        rej_rows.extend(rows)
        name = f"csv_{i}"
        con.register(name, table)
        selects.append(_raw_select(s, i, name))
    # The CSV files are read (in file order, for their line numbers); every later query
    # orders what it needs by file and row, so duckdb may stream in any order.
    con.execute("SET preserve_insertion_order = false")
    con.execute("CREATE OR REPLACE TEMP VIEW raw AS " + " UNION ALL BY NAME ".join(selects))
    # Agent names: normalise the few distinct values in Python with the reference's rules.
    step(0.35, "Checking agents")
    distinct = [r[0] for r in con.sql("SELECT DISTINCT agent_raw FROM raw WHERE agent_raw IS NOT NULL").fetchall()]
    amap = []
    for raw in distinct:
        key = normalise_agent_name(raw)
        if key in ("none", "no_agent", "-", "tiva"):
            amap.append((raw, "none", 0.0))
        elif key in reference.agents and reference.agents[key].kind == "volatile":
            amap.append((raw, key, float(reference.agents[key].vaporizer_max)))
    agent_case = ("CASE agent_raw " + " ".join(f"WHEN {_sql_str(r)} THEN {_sql_str(k)}" for r, k, _ in amap)
                  + " END") if amap else "NULL::VARCHAR"
    dial_case = ("CASE agent_raw " + " ".join(f"WHEN {_sql_str(r)} THEN {d!r}" for r, _, d in amap)
                 + " END") if amap else "NULL::DOUBLE"
    a = AIR_O2_FRACTION  # US Standard Atmosphere 1976 (see model.reference)
    con.execute(f"""
    CREATE OR REPLACE TEMP VIEW prepared AS
    WITH r AS (
      SELECT raw.*, {agent_case} AS agent, {dial_case} AS max_dial,
        coalesce(epoch_ms(ts) / 60000.0, elapsed) AS t_min,
        CASE WHEN has_ts = 1 THEN CAST(date_trunc('month', ts) AS DATE)
             ELSE CAST(date_trunc('month', day) AS DATE) END AS month,
        CASE WHEN has_ts = 1 THEN ts ELSE day END AS start_hint
      FROM raw
    ), f AS (
      SELECT *,
        CASE WHEN parts_mode = 1 THEN coalesce(n2o, 0)
             ELSE coalesce(n2o_share, 0) / 100.0 * fgf END AS n2o_f,
        CASE WHEN parts_mode = 1 THEN coalesce(air, 0)
             ELSE (fgf * (1 - coalesce(n2o_share, 0) / 100.0) - o2_share / 100.0 * fgf) / (1 - {a!r}) END AS air_f
      FROM r
    ), g AS (
      SELECT *,
        CASE WHEN parts_mode = 1 THEN coalesce(o2, 0)
             ELSE fgf * (1 - coalesce(n2o_share, 0) / 100.0) - air_f END AS o2_f,
        CASE WHEN parts_mode = 1 THEN (o2 IS NULL AND air IS NULL AND n2o IS NULL)
             ELSE (fgf IS NULL OR o2_share IS NULL) END AS no_flow
      FROM f
    )
    SELECT _fileno, _row, case_id, theatre, agent_raw, agent, t_min, month, start_hint,
      o2_f AS o2, air_f AS air, n2o_f AS n2o, dial, end_tidal, o2_share, n2o_share, fgf AS fgf_in,
      parts_mode, txt_col, txt_val, bad_time,
      CASE
        WHEN txt_col IS NOT NULL THEN 'text_in_number'
        WHEN bad_time IS NOT NULL THEN 'bad_time'
        WHEN case_id IS NULL OR t_min IS NULL OR agent_raw IS NULL OR no_flow
             OR (agent IS NOT NULL AND agent <> 'none' AND dial IS NULL AND end_tidal IS NULL) THEN 'missing_value'
        WHEN agent IS NULL THEN 'unknown_agent'
        WHEN (parts_mode = 1 AND (o2 < 0 OR air < 0 OR n2o < 0)) OR (parts_mode = 0 AND fgf < 0) THEN 'negative_flow'
        WHEN (parts_mode = 1 AND (o2 > {MAX_FLOW_L_MIN!r} OR air > {MAX_FLOW_L_MIN!r} OR n2o > {MAX_FLOW_L_MIN!r}))
             OR o2_f + air_f + n2o_f > {MAX_TOTAL_FLOW_L_MIN!r} THEN 'absurd_flow'
        WHEN dial < 0 OR dial > max_dial OR end_tidal < 0 OR end_tidal > max_dial
             OR o2_share < 0 OR o2_share > 100 OR n2o_share < 0 OR n2o_share > 100
             OR (parts_mode = 0 AND (air_f < -1e-9 OR o2_f < -1e-9)) THEN 'absurd_setting'
      END AS problem_a
    FROM g
    """)
    con.execute("""
    CREATE OR REPLACE TEMP VIEW checked AS
    SELECT *, coalesce(problem_a,
        CASE WHEN t_min = prev_max THEN 'duplicate_time' WHEN t_min < prev_max THEN 'time_backwards' END) AS problem
    FROM (
      SELECT *, max(CASE WHEN problem_a IS NULL THEN t_min END) OVER (
        PARTITION BY case_id ORDER BY _fileno, _row ROWS BETWEEN UNBOUNDED PRECEDING AND 1 PRECEDING) AS prev_max
      FROM prepared)
    """)
    gl = float(gap_limit_min)
    con.execute(f"""
    CREATE OR REPLACE TEMP VIEW valid AS
    WITH v AS (
      SELECT _fileno, _row, case_id, theatre, agent, t_min, month, start_hint,
        greatest(o2, 0) AS o2, greatest(air, 0) AS air, greatest(n2o, 0) AS n2o,
        greatest(o2, 0) + greatest(air, 0) + greatest(n2o, 0) AS fgf,
        CASE WHEN agent = 'none' THEN 0 ELSE coalesce(dial, end_tidal) END AS dose_pct,
        (agent <> 'none' AND dial IS NULL) AS from_end_tidal,
        lead(t_min) OVER w - t_min AS dt_raw
      FROM checked WHERE problem IS NULL
      WINDOW w AS (PARTITION BY case_id ORDER BY _fileno, _row)
    )
    SELECT *, coalesce(dt_raw > {gl!r}, false) AS gap,
      CASE WHEN dt_raw > {gl!r} THEN 0.0 ELSE coalesce(dt_raw, 0.0) END AS dt_min,
      {_band_sql('fgf')} AS band
    FROM v
    """)
    recs = Records(con, specs, report, gl, reference, tmp)
    recs.report.issues = pd.DataFrame(rej_rows, columns=["file", "row", "kind", "column", "value", "message"])
    recs._rejected = len(rej_rows)
    recs._max_messages = max_messages
    step(0.4, "Records ready")
    return recs


def finish_report(recs: Records, counts: dict[str, int], rows_valid: int, gaps: int,
                  gap_minutes: float, time_rows=None, gap_rows=None) -> ReadReport:
    """Fill the report's counts and row-numbered messages (at most ``max_messages``).

    With ``time_rows`` and ``gap_rows`` given (the in-memory engine found them), only the
    row-level problems are fetched (from the ``prepared`` view, no window); without them,
    everything comes from the ``checked`` and ``valid`` views.
    """
    rep = recs.report
    con = recs.con
    for k in ISSUE_KINDS:
        rep.set_aside[k] = 0
    for kind in rep.issues["kind"]:
        rep.set_aside[kind] += 1
    for k, v in counts.items():
        if k in rep.set_aside:
            rep.set_aside[k] += int(v)
    rep.rows_valid = int(rows_valid)
    rep.rows_read = rep.rows_valid + rep.rows_set_aside
    rep.gaps = int(gaps)
    rep.gap_minutes = float(gap_minutes)
    limit = max(recs._max_messages - len(rep.issues), 0)
    files = dict(enumerate(recs.files))
    cols = """_fileno, _row, {problem}, case_id, agent_raw, t_min, txt_col, txt_val, bad_time, o2, air, n2o,
        dial, end_tidal, o2_share, n2o_share, fgf_in, parts_mode, {prev}"""
    new = []
    if time_rows is None:
        if limit and sum(counts.values()):
            rows = con.sql(f"SELECT {cols.format(problem='problem', prev='prev_max')} FROM checked "
                           f"WHERE problem IS NOT NULL ORDER BY _fileno, _row LIMIT {limit}").fetchall()
            new = [_issue_row(files[r[0]], r, recs.reference) for r in rows]
    else:
        if limit and sum(v for k, v in counts.items() if k not in ("duplicate_time", "time_backwards")):
            rows = con.sql(f"SELECT {cols.format(problem='problem_a', prev='NULL')} FROM prepared "
                           f"WHERE problem_a IS NOT NULL ORDER BY _fileno, _row LIMIT {limit}").fetchall()
            new = [_issue_row(files[r[0]], r, recs.reference) for r in rows]
        for f, row, kind, case_id, t_min, prev_max in time_rows[:limit]:
            r = (f, row, kind, case_id, None, t_min) + (None,) * 12 + (prev_max,)
            new.append(_issue_row(files[f], r, recs.reference))
    if new:
        rep.issues = pd.concat([rep.issues, pd.DataFrame(new, columns=rep.issues.columns)], ignore_index=True)
    rep.issues = rep.issues.sort_values(["file", "row"], kind="stable").head(recs._max_messages)
    rep.issues = rep.issues.reset_index(drop=True)
    if gaps and gap_rows is None:
        gap_rows = con.sql(f"""SELECT _fileno, _row, case_id, t_min, dt_raw FROM valid WHERE gap
            ORDER BY _fileno, _row LIMIT {max(recs._max_messages, 1)}""").fetchall()
    if gap_rows:
        rep.gap_list = pd.DataFrame([
            (files[f].path, int(r), c, float(d),
             f"{files[f].path}: {files[f].row_label} {int(r)}: case {c}: {d:g} min to the next sample "
             f"(limit {recs.gap_limit_min:g} min); the interval is not counted")
            for f, r, c, t, d in gap_rows], columns=["file", "row", "case_id", "minutes", "message"])
    return rep


def _fmt_num(x) -> str:
    return "empty" if x is None else f"{x:g}"


def _issue_row(rf: RecordFile, r, reference: Reference):
    (_, row, kind, case_id, agent_raw, t_min, txt_col, txt_val, bad_time, o2, air, n2o, dial, et,
     o2s, n2os, fgf, parts, prev_max) = r
    col, val = None, None
    if kind == "text_in_number":
        col, val = rf.columns[txt_col].source, txt_val
        msg = f"column '{col}' holds '{val}', expected a number"
    elif kind == "bad_time":
        col = rf.columns["time" if "time" in rf.columns else "date"].source
        val = bad_time
        msg = f"column '{col}' holds '{val}', expected a date-time such as 2025-03-04 08:15:00"
    elif kind == "missing_value":
        empty = []
        if case_id is None:
            empty.append(rf.columns["case_id"].source)
        if t_min is None:
            empty.append(rf.columns["time" if "time" in rf.columns else "elapsed"].source)
        if agent_raw is None:
            empty.append(rf.columns["agent"].source)
        if parts and o2 is None and air is None and n2o is None or (not parts and (fgf is None or o2s is None)):
            empty.append("every flow" if parts else "fgf or o2_share")
        if not empty:
            empty.append("dial and end-tidal")
        col = empty[0]
        msg = "empty " + ", ".join(empty) + "; the row is set aside"
    elif kind == "unknown_agent":
        col, val = rf.columns["agent"].source, agent_raw
        allowed = ", ".join(k for k, v in reference.agents.items() if v.kind == "volatile")
        msg = f"agent '{agent_raw}' is unknown; allowed are {allowed}, none"
    elif kind == "negative_flow":
        col = "flow"
        shown = (("o2", o2), ("air", air), ("n2o", n2o)) if parts else (("fgf", fgf),)
        val = ", ".join(f"{n} {_fmt_num(v)}" for n, v in shown if v is not None and v < 0)
        msg = f"negative flow ({val} L/min)"
    elif kind == "absurd_flow":
        col = "flow"
        total = sum(v for v in (o2, air, n2o) if v is not None)
        val = f"O2 {_fmt_num(o2)}, air {_fmt_num(air)}, N2O {_fmt_num(n2o)} L/min"
        msg = (f"flows {val} (total {total:g}) exceed {MAX_FLOW_L_MIN:g} L/min per gas or "
               f"{MAX_TOTAL_FLOW_L_MIN:g} L/min in total")
    elif kind == "absurd_setting":
        col = "setting"
        val = f"dial {_fmt_num(dial)} %, end-tidal {_fmt_num(et)} %"
        if not parts:
            val += f", O2 share {_fmt_num(o2s)} %, N2O share {_fmt_num(n2os)} %"
        msg = f"{val}: outside what the agent's vaporizer or the gas mix allows"
    elif kind == "duplicate_time":
        col = "time"
        val = _fmt_num(t_min)
        msg = f"case {case_id}: the same time as an earlier sample; the later one is set aside"
    else:  # time_backwards
        col = "time"
        val = _fmt_num(t_min)
        msg = (f"case {case_id}: time earlier than an earlier sample of the case "
               f"(by {prev_max - t_min:g} min); the rows of a case must be in time order")
    return (rf.path, int(row), kind, col, None if val is None else str(val),
            f"{rf.path}: {rf.row_label} {int(row)}: {msg}")
