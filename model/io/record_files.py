"""Case record files: recognised columns and units, file inspection and path expansion."""

from __future__ import annotations

import os
import re
from collections.abc import Iterable, Sequence
from contextlib import contextmanager
from dataclasses import dataclass, field
from pathlib import Path

from model.base.errors import InputError
from model.base.files import Source, shown_path
from model.base.units import registry, safe_quantity_text

RECORD_FORMATS = ("csv", "parquet")

#: Canonical fields: name -> (base unit or kind, accepted names (lower case, before any unit)).
FIELDS = {
    "case_id": ("text", ("case_id", "case", "case id", "caseid")),
    "time": ("timestamp", ("time", "timestamp", "sample_time", "date_time", "datetime")),
    "elapsed": ("min", ("elapsed", "elapsed_min", "minutes", "minute", "elapsed_time")),
    "date": ("date", ("date", "case_date")),
    "theatre": ("text", ("theatre", "theater", "location", "room", "theatre_id")),
    "agent": ("text", ("agent", "volatile", "volatile_agent")),
    "o2": ("L/min", ("o2", "oxygen", "o2_flow", "oxygen_l_min")),
    "air": ("L/min", ("air", "air_flow", "air_l_min")),
    "n2o": ("L/min", ("n2o", "nitrous_oxide", "n2o_flow", "nitrous_oxide_l_min")),
    "fgf": ("L/min", ("fgf", "total_flow", "fresh_gas_flow", "fgf_l_min")),
    "o2_share": ("percent", ("o2_share", "o2_share_pct", "fd_o2", "fdo2")),
    "n2o_share": ("percent", ("n2o_share", "n2o_share_pct", "fd_n2o")),
    "dial": ("percent", ("dial", "dial_pct", "vaporizer", "dial_setting")),
    "end_tidal": ("percent", ("end_tidal", "end_tidal_pct", "et_agent", "etagent")),
}
NUMBER_FIELDS = ("elapsed", "o2", "air", "n2o", "fgf", "o2_share", "n2o_share", "dial", "end_tidal")
_ALIAS_TO_FIELD = {alias: name for name, (_, aliases) in FIELDS.items() for alias in aliases}

#: Highest single flowmeter flow accepted. [L/min] Common practice, no source (the same
#: limit as plan files; workstation flowmeters end at 10-15 L/min, the flush is not a flow).
MAX_FLOW_L_MIN = 20.0
#: Highest total fresh gas flow accepted. [L/min] Common practice, no source (as plan files).
MAX_TOTAL_FLOW_L_MIN = 30.0
#: Default longest interval between two samples of a case that is integrated. [min]
#: Common practice, no source: minute-level exports rarely miss more than a few samples.
DEFAULT_GAP_LIMIT_MIN = 5.0

_UNITS_LINE = re.compile(r"^\s*#\s*units?\s*:\s*(.*)$", re.IGNORECASE)
_NAME_UNIT = re.compile(r"^\s*(.*?)\s*[\[(]\s*(.+?)\s*[\])]\s*$")


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

    #: Where the file is read from ("" for a CSV file given as bytes, read from ``data``).
    path: str
    format: str
    columns: dict[str, Column]
    #: Source column names not recognised (ignored, named in the report).
    ignored: list[str] = field(default_factory=list)
    #: Lines before the header row (CSV only).
    skip_lines: int = 0
    #: duckdb type of each source column.
    types: dict[str, str] = field(default_factory=dict)
    #: The file as the user knows it (:attr:`model.base.files.Source.name`): every message
    #: names it so. The path when not given.
    name: str = ""
    #: The bytes of a CSV file given as bytes (None: read from ``path``).
    data: bytes | None = field(default=None, repr=False)
    #: The header's column names in order, as written (CSV; names may repeat or be empty).
    names: list[str] = field(default_factory=list)
    #: The time zone stored with each Parquet date-time column that has one (column -> zone).
    time_zones: dict[str, str] = field(default_factory=dict)

    def __post_init__(self) -> None:
        if not self.name:
            self.name = self.path

    @property
    def flow_mode(self) -> str:
        """How the flows are given: ``"parts"`` (O2, air, N2O) or ``"total"`` (FGF and O2 share)."""
        return "parts" if any(k in self.columns for k in ("o2", "air", "n2o")) else "total"

    @property
    def row_label(self) -> str:
        """What a message calls a row of the file: ``"line"`` (CSV) or ``"row"`` (Parquet)."""
        return "line" if self.format == "csv" else "row"


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
            raise InputError(
                f"{where}: column '{src}'", src, f"the field '{key}' already comes from column '{columns[key].source}'"
            )
        base = FIELDS[key][0]
        unit = unit or declared.get(name.lower(), "") or declared.get(key, "")
        factor = 1.0
        if base in ("text", "timestamp", "date"):
            if unit:
                raise InputError(f"{where}: column '{src}'", unit, "this column takes no unit")
        elif unit:
            factor = _unit_factor(unit, base, f"{where}: unit of column '{src}'")
        columns[key] = Column(key, src, factor, unit)
    unknown_declared = [
        k
        for k in declared
        if k not in {c.source.lower() for c in columns.values()}
        and k not in columns
        and _NAME_UNIT.sub(r"\1", k)
        not in {(m.group(1) if (m := _NAME_UNIT.match(c.source)) else c.source).lower() for c in columns.values()}
    ]
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
        raise InputError(
            f"{where}: columns",
            ", ".join(columns[k].source for k in columns) or "none",
            "missing required column(s): " + "; ".join(missing) + " (see docs/formats.md, 'Case records')",
        )


def inspect_file(source: Source | str | os.PathLike) -> RecordFile:
    """Read the header of a record file and map its columns (no data rows are read).

    Parameters
    ----------
    source : Source or path
        The file; a path is named by the path as given. A Parquet file is read by its
        path (duckdb and pyarrow open it): give Parquet bytes as a file
        (:func:`model.io.records.read_records` writes them to its private folder).

    Raises
    ------
    InputError
        The file is missing or unreadable, is not CSV/Parquet, is UTF-16, declares an
        unknown unit, or lacks a required column. Every message names ``source.name``.
    """
    src = Source.of(source)
    fmt = _record_format(src)
    if fmt == "parquet":
        if src.path is None:
            raise ValueError("a Parquet record file is read from a path; write its bytes to a file first")
        return _inspect_parquet(src)
    return _inspect_csv(src)


def _record_format(src: Source) -> str:
    """The record format ("csv" or "parquet") from the extension; InputError if neither, or no such file."""
    where = src.name
    fmt = src.suffix.lower().lstrip(".")
    if fmt not in RECORD_FORMATS:
        raise InputError(where, src.suffix or "no extension", "record files end in .csv or .parquet")
    found = src.kind("record file")
    if found != "file":
        raise InputError(
            where, shown_path(where), "the file does not exist" if found == "missing" else "expected a file"
        )
    return fmt


def _inspect_parquet(src: Source) -> RecordFile:
    """The columns of a Parquet record file, from its schema, and their duckdb types."""
    import pyarrow as pa
    import pyarrow.parquet as pq

    where, path = src.name, str(src.path)
    try:
        schema = pq.read_schema(path)
    except Exception as exc:
        raise InputError(where, "the file", f"not a readable Parquet file ({type(exc).__name__})") from None
    columns, ignored = map_columns(list(schema.names), {}, where)
    _duration_factors(columns, schema, where)
    types = _parquet_types(path, where)
    for key, col in columns.items():
        check_column_type(key, types.get(col.source, "VARCHAR"), f"{where}: column '{col.source}'")
    zones = {n: t.tz for n in schema.names if pa.types.is_timestamp(t := schema.field(n).type) and t.tz}
    return RecordFile(path, "parquet", columns, ignored, 0, types, name=where, time_zones=zones)


def _duration_factors(columns: dict[str, Column], schema, where: str) -> None:
    """Give a duration column its factor to minutes (pyarrow reads it as a count of s, ms, us or ns).

    Any field but elapsed has no use for a duration: InputError naming the column.
    """
    import pyarrow as pa

    for key, col in list(columns.items()):
        ptype = schema.field(col.source).type
        if pa.types.is_duration(ptype):
            if key != "elapsed":
                raise InputError(
                    f"{where}: column '{col.source}'", str(ptype), "a duration fits only the elapsed column"
                )
            seconds = {"s": 1.0, "ms": 1e-3, "us": 1e-6, "ns": 1e-9}[ptype.unit]
            columns[key] = Column(key, col.source, seconds / 60.0, ptype.unit)


def _parquet_types(path: str, where: str) -> dict[str, str]:
    """The duckdb type of each column of a Parquet file."""
    import duckdb

    try:
        described = duckdb.execute(f"DESCRIBE SELECT * FROM read_parquet({_sql_str(path)})").fetchall()
    except duckdb.Error as exc:
        raise InputError(where, "the file", f"not a readable Parquet file ({type(exc).__name__})") from None
    return {r[0]: r[1] for r in described}


#: Bytes read from the top of a CSV record file to find its units lines and header row.
_CSV_HEAD_BYTES = 65536


def _inspect_csv(src: Source) -> RecordFile:
    """The columns of a CSV record file, from its units lines and header row."""
    where = src.name
    head = src.head(_CSV_HEAD_BYTES)
    if head.startswith((b"\xff\xfe", b"\xfe\xff")) or (len(head) > 1 and head[1:2] == b"\x00"):
        raise InputError(where, "UTF-16 text", "save the file as UTF-8 text (CSV UTF-8)")
    if head.startswith(b"\xef\xbb\xbf"):
        head = head[3:]
    header_line, skip, declared = _csv_header(head, where)
    import csv

    try:
        names = next(csv.reader([header_line]))
    except csv.Error as exc:
        raise InputError(f"{where}, line {skip + 1}", "the header row", f"not readable as CSV ({exc})") from None
    # Unnamed columns are ignored: those at the end (every line ending in "," as
    # spreadsheets export) silently, others named by their place.
    last = max((i for i, n in enumerate(names) if n.strip()), default=-1)
    columns, ignored = map_columns([n for n in names if n.strip()], declared, where)
    ignored += [f"column {i + 1} (no name)" for i, n in enumerate(names[:last]) if not n.strip()]
    path = "" if src.path is None else str(src.path)
    types = {n: "VARCHAR" for n in names}
    return RecordFile(path, "csv", columns, ignored, skip, types, name=where, data=src.data, names=list(names))


def _csv_header(head: bytes, where: str) -> tuple[str, int, dict[str, str]]:
    """The header row of a CSV file's first bytes, the lines before it and the units they declare."""
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
    if skip >= len(lines) - 1 and len(head) == _CSV_HEAD_BYTES:
        raise InputError(where, "no header row", "expected a header row near the top of the file")
    header_line = lines[skip].decode("utf-8", errors="replace").rstrip("\r") if skip < len(lines) else ""
    if not header_line.strip():
        raise InputError(where, "an empty file", "expected a header row with column names")
    return header_line, skip, declared


#: duckdb types read as numbers as they are (exact names; DECIMAL(p,s) too).
NUMERIC_TYPES = frozenset(
    {
        "DOUBLE",
        "FLOAT",
        "REAL",
        "INTEGER",
        "BIGINT",
        "SMALLINT",
        "TINYINT",
        "HUGEINT",
        "UHUGEINT",
        "UBIGINT",
        "UINTEGER",
        "USMALLINT",
        "UTINYINT",
    }
)
#: duckdb types read as date-times as they are.
TIME_TYPES = frozenset(
    {"TIMESTAMP", "TIMESTAMP WITH TIME ZONE", "TIMESTAMPTZ_NS", "TIMESTAMP_S", "TIMESTAMP_MS", "TIMESTAMP_NS", "DATE"}
)
#: Scalar duckdb types read as text (and checked row by row, as CSV cells are).
TEXT_TYPES = frozenset({"VARCHAR", "BOOLEAN", "UUID", "TIME", "INTERVAL", "BLOB"})
_DECIMAL = re.compile(r"^DECIMAL\(\d+,\s*\d+\)$")


def is_numeric_type(duck_type: str) -> bool:
    """Whether a duckdb column type is a plain number (exactly: ``DOUBLE[]`` is a list, not a number)."""
    t = duck_type.strip().upper()
    return t in NUMERIC_TYPES or bool(_DECIMAL.match(t))


def is_time_type(duck_type: str) -> bool:
    """Whether a duckdb column type is a date-time or a date (exactly)."""
    return duck_type.strip().upper() in TIME_TYPES


def check_column_type(field_name: str, duck_type: str, where: str) -> None:
    """Refuse a column whose type cannot hold its field: lists, structs, maps, durations elsewhere.

    Raises
    ------
    InputError
        Naming the column and its type.
    """
    t = duck_type.strip().upper()
    if is_numeric_type(t) or is_time_type(t) or t in TEXT_TYPES:
        return
    kind = FIELDS[field_name][0]
    wanted = {"text": "text", "timestamp": "a date-time or text", "date": "a date or text"}.get(
        kind, f"numbers or text (in {kind.replace('percent', '%')})"
    )
    raise InputError(
        where,
        duck_type,
        f"a column of type {duck_type} cannot hold '{field_name}'; expected one value per row: {wanted}",
    )


@contextmanager
def file_failures(files: Sequence[RecordFile]):
    """Turn any failure of the readers under this block into one InputError naming the file.

    duckdb, pyarrow and the operating system raise many types for a damaged file (a page
    overwritten behind an intact footer gives "Out of buffer", a decompression failure, a
    Thrift protocol error, a conversion error, text that is not UTF-8). Whatever they raise becomes one line naming
    the file; when several files are read and the message names none, each Parquet file is
    scanned on its own to find the one that fails.
    """
    import duckdb
    import pyarrow as pa

    try:
        yield
    except InputError:
        raise
    except (duckdb.Error, pa.ArrowException, OSError, RuntimeError, UnicodeDecodeError) as exc:
        raise failure_of(files, exc) from None


def failure_of(files: Sequence[RecordFile], exc: BaseException) -> InputError:
    """One InputError naming the file a reader failure came from (see :func:`file_failures`)."""
    text = str(exc)
    named = [f for f in files if f.path and f.path in text]
    # The library's own words may quote the place a file is read from: name the file instead.
    for f in sorted(files, key=lambda f: len(f.path), reverse=True):
        if f.path and f.path != f.name:
            text = text.replace(f.path, f.name)
    first = (text.strip().splitlines() or [""])[0][:200] or type(exc).__name__
    if not named and len(files) == 1:
        named = list(files)
    if not named:
        named = [f for f in files if f.format == "parquet" and not _scans(f)]
    if not named:
        return InputError(
            "records",
            ", ".join(shown_path(f.name) for f in files)[:200],
            f"the files cannot be read to the end ({type(exc).__name__}: {first})",
        )
    f = named[0]
    what = "a damaged Parquet file" if f.format == "parquet" else "a file that cannot be read to the end"
    return InputError(f.name, "the file", f"{what} ({type(exc).__name__}: {first}); export it again or leave it out")


def _scans(rf: RecordFile) -> bool:
    """Whether every mapped column of a Parquet file decodes (a full scan; used only after a failure)."""
    import duckdb

    cols = ", ".join(_ident(c.source) for c in rf.columns.values()) or "*"
    try:
        duckdb.execute(f"SELECT max(hash({cols})) FROM read_parquet({_sql_str(rf.path)})").fetchall()
        return True
    except Exception:  # noqa: BLE001  (any failure means this file is the damaged one)
        return False


def expand_paths(patterns: Iterable) -> list[Source]:
    """Files named by paths or glob patterns, in order, each once.

    A :class:`model.base.files.Source` is taken as it is (its name is no pattern); a path
    or a pattern's match is named by its path.

    Raises
    ------
    InputError
        A pattern matches nothing.
    """
    import glob

    out: list[Source] = []
    seen: set[str] = set()
    for pat in patterns:
        if isinstance(pat, Source):
            key = "" if pat.path is None else str(pat.path)
            if not key or key not in seen:
                out.append(pat)
                seen.add(key)
            continue
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
            if f not in seen:
                out.append(Source.of(f))
                seen.add(f)
    if not out:
        raise InputError("records", "no files", "give at least one record file")
    return out


# --------------------------------------------------------------------------------------
# SQL building


def _sql_str(text: str) -> str:
    return "'" + text.replace("'", "''") + "'"


def _ident(name: str) -> str:
    return '"' + name.replace('"', '""') + '"'
