"""Case records: the project's own long-form sample format, read and checked with duckdb.

A record file holds one row per sample of a case (CSV or Parquet; the format is documented
in docs/formats.md, "Case records"). Columns are recognised by name; a unit is declared in the
column name (``o2 [mL/min]``) or, in CSV, in a leading header line (``# units: o2=mL/min``)
and converted with pint once per column. Every row passes the checks below; a row that
fails one is set aside with a row-numbered message, every other row is used. All checks
run as vectorised duckdb SQL, so the same code reads one small file or a glob of Parquet
files far larger than memory.

Row-level problems (``ISSUE_KINDS``), in the order they are checked:

=================  ================================================================
encoding           the CSV line is not valid UTF-8
field_count        the CSV line has more or fewer fields than the header (trailing
                   empty fields count)
unreadable         the CSV line cannot be parsed (an unclosed quote, a lone CR, a NUL)
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
from collections.abc import Callable
from pathlib import Path

import numpy as np
import pandas as pd

from model.base.errors import InputError
from model.base.files import Source
from model.base.units import NUMBER_GRAMMAR
from model.freshgas import FLOW_BANDS
from model.io.duckdb_connection import LazyConnection, connect, plain_size
from model.io.record_csv import csv_table
from model.io.record_files import (
    DEFAULT_GAP_LIMIT_MIN,
    MAX_FLOW_L_MIN,
    MAX_TOTAL_FLOW_L_MIN,
    NUMBER_FIELDS,
    RecordFile,
    _ident,
    _sql_str,
    expand_paths,
    file_failures,
    inspect_file,
    is_numeric_type,
    is_time_type,
)
from model.io.record_reading import DEFAULT_MAX_MESSAGES, ReadSummary, Records
from model.io.record_times import check_time_zone, instant_ms, stored_zone_local, text_time_levels, zone_levels
from model.reference import AIR_O2_FRACTION, DEFAULT_REFERENCE, Reference, normalise_agent_name

#: :data:`model.base.units.NUMBER_GRAMMAR` as a SQL string (duckdb's regular expressions).
_NUMBER_SQL = _sql_str(NUMBER_GRAMMAR)


def _raw_select(rf: RecordFile, fileno: int, source_sql: str, zone: str | None = None) -> str:
    """SELECT giving the canonical raw columns of one file (or a group with one schema).

    ``zone`` is the time zone of times written without a UTC offset (None: as written).
    """
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
        if is_numeric_type(rf.types.get(c[f].source, "VARCHAR")):
            parts.append(f"CAST({col} AS DOUBLE) * {factor} AS {f}")
        else:
            s = f"NULLIF(trim(CAST({col} AS VARCHAR)), '')"
            # One number grammar for every reader (duckdb's cast alone reads "1_5" as 15).
            number = f"CASE WHEN regexp_full_match({s}, {_NUMBER_SQL}) THEN TRY_CAST({s} AS DOUBLE) END"
            parts.append(f"{number} * {factor} AS {f}")
            txt_checks.append((f, f"({s} IS NOT NULL AND ({number}) IS NULL)", s))
    # A number that is not finite ('inf', 'nan') counts as text in a number column.
    for f in NUMBER_FIELDS:
        if f in c and not any(t[0] == f for t in txt_checks):
            col = _ident(c[f].source)
            txt_checks.append((f, f"(NOT isfinite(CAST({col} AS DOUBLE)))", f"CAST({col} AS VARCHAR)"))
        elif f in c:
            s = f"NULLIF(trim(CAST({_ident(c[f].source)} AS VARCHAR)), '')"
            txt_checks.append((f, f"(NOT isfinite(TRY_CAST({s} AS DOUBLE)))", s))
    if txt_checks:
        parts.append("CASE " + " ".join(f"WHEN {cond} THEN '{f}'" for f, cond, _ in txt_checks) + " END AS txt_col")
        parts.append("CASE " + " ".join(f"WHEN {cond} THEN {val}" for f, cond, val in txt_checks) + " END AS txt_val")
    else:
        parts.append("NULL::VARCHAR AS txt_col")
        parts.append("NULL::VARCHAR AS txt_val")
    # Time: a date-time column wins over elapsed minutes.
    levels: list[str] = []
    if "time" in c:
        time_parts, levels = _time_columns(rf, zone)
        parts.extend(time_parts)
    else:
        parts.append("NULL::TIMESTAMP AS ts")
        parts.append("NULL::BIGINT AS ts_ms")
        if "date" in c:
            col = _ident(c["date"].source)
            s = f"NULLIF(trim(CAST({col} AS VARCHAR)), '')"
            if is_time_type(rf.types.get(c["date"].source, "VARCHAR")):
                parts.append("NULL::VARCHAR AS bad_time")
                parts.append(f"CAST(CAST({col} AS DATE) AS TIMESTAMP) AS day")
            else:  # the date of a cell by the documented grammar of times, as written
                levels = text_time_levels(s)
                parts.append(f"CASE WHEN {s} IS NOT NULL AND __gl_local IS NULL THEN {s} END AS bad_time")
                parts.append("CAST(CAST(__gl_local AS DATE) AS TIMESTAMP) AS day")
        else:
            parts.append("NULL::VARCHAR AS bad_time")
    if "time" in c or "date" not in c:
        parts.append("NULL::TIMESTAMP AS day")
    parts.append(f"{1 if rf.flow_mode == 'parts' else 0} AS parts_mode")
    parts.append(f"{1 if 'time' in c else 0} AS has_ts")
    for level in levels:  # the time's parts, each level computed once per row
        source_sql = f"(SELECT *, {level} FROM {source_sql})"
    return f"SELECT {', '.join(parts)} FROM {source_sql}"


def _time_columns(rf: RecordFile, zone: str | None) -> tuple[list[str], list[str]]:
    """The ``ts``, ``ts_ms`` and ``bad_time`` columns of a file with a time column, and the levels they need.

    ``ts`` is the wall-clock time (for the month and the start shown), ``ts_ms`` the
    instant in milliseconds since 1970 UTC (for the minutes); the levels are the columns
    computed first around the source (:mod:`model.io.record_times`).
    """
    c = rf.columns
    parts: list[str] = []
    levels: list[str] = []
    col = _ident(c["time"].source)
    ttype = rf.types.get(c["time"].source, "VARCHAR").strip().upper()
    cell = f"NULLIF(trim(CAST({col} AS VARCHAR)), '')"
    if ttype in ("TIMESTAMP WITH TIME ZONE", "TIMESTAMPTZ_NS"):  # an instant: its wall clock in the stored zone
        if ttype == "TIMESTAMPTZ_NS":  # nanoseconds cut to microseconds
            col = f"timezone('UTC', make_timestamp(epoch_ns({col}) // 1000))"
        local, ms, bad = stored_zone_local(col, rf.time_zones.get(c["time"].source, "")), f"epoch_ms({col})", None
    elif is_time_type(ttype):
        # Nanoseconds cut to microseconds (duckdb's own cast rounds them).
        local = f"make_timestamp(epoch_ns({col}) // 1000)" if ttype == "TIMESTAMP_NS" else f"CAST({col} AS TIMESTAMP)"
        if zone is None:
            ms, bad = f"epoch_ms({local})", None
        else:
            levels = [f"{local} AS __gl_local", *zone_levels("__gl_local", zone)]
            local = "__gl_local"
            ms = instant_ms(local, None, zone)
            bad = f"CAST({local} AS VARCHAR)"
    else:
        levels = [*text_time_levels(cell), *zone_levels("__gl_local", zone)]
        local, ms, bad = "__gl_local", instant_ms("__gl_local", "__gl_offset", zone), cell
    parts.append(f"{local} AS ts")
    parts.append(f"{ms} AS ts_ms")
    present = cell if bad == cell else col
    parts.append(
        f"CASE WHEN {present} IS NOT NULL AND ({ms}) IS NULL THEN {bad} END AS bad_time"
        if bad
        else "NULL::VARCHAR AS bad_time"
    )
    return parts, levels


#: Stands for the source of the ``prepared`` query until it is given (all files, or one).
_SOURCE = "/*@records source@*/"


def _distinct_agents(con, specs, file_selects, group_sql=()) -> list:
    """The distinct agent texts as the checks read them (``agent_raw``: trimmed, empty is missing).

    A Parquet file with a text agent column gives them from its dictionary pages with
    pyarrow (no text per row); any other file from its SQL.
    """
    import pyarrow as pa
    import pyarrow.compute as pc
    import pyarrow.parquet as pq

    found: set = set()
    in_groups = {i for idx, _ in group_sql for i in idx}
    by_sql = [sql for _, sql in group_sql]
    for i, s in enumerate(specs):
        if i in in_groups:
            continue
        src = s.columns["agent"].source
        t = pq.read_schema(s.path).field(src).type if s.format == "parquet" else None
        t = t.value_type if t is not None and pa.types.is_dictionary(t) else t
        if t is None or not (pa.types.is_string(t) or pa.types.is_large_string(t)):
            by_sql.append(file_selects[i])
            continue
        with file_failures([s]):  # a damaged page or text not UTF-8: this file, named
            col = pq.read_table(s.path, columns=[src], read_dictionary=[src])[src]
            for chunk in col.chunks:
                chunk.dictionary.validate(full=True)
                values = pc.utf8_trim(chunk.dictionary.cast(pa.string()), characters=" ")
                # Only values some row uses (a dictionary may hold others).
                used = pc.unique(chunk.indices.drop_null())
                found.update(v for v in values.take(used).to_pylist() if v)
    if by_sql:
        union = " UNION ALL ".join(f"SELECT agent_raw FROM ({q})" for q in by_sql)
        found.update(
            r[0] for r in con.sql(f"SELECT DISTINCT agent_raw FROM ({union}) WHERE agent_raw IS NOT NULL").fetchall()
        )
    return sorted(found)


def _parquet_rows(path: str) -> int:
    """Rows of a Parquet file, from its footer (no data read)."""
    import pyarrow.parquet as pq

    return int(pq.ParquetFile(path).metadata.num_rows)


def _band_sql(expr: str) -> str:
    """SQL CASE giving the flow band name of ``expr`` [L/min], from ``model.freshgas.FLOW_BANDS``."""
    whens = " ".join(f"WHEN {expr} <= {upper!r} THEN {_sql_str(name)}" for name, upper in FLOW_BANDS[:-1])
    return f"CASE {whens} ELSE {_sql_str(FLOW_BANDS[-1][0])} END"


def read_records(
    paths,
    *,
    reference: Reference = DEFAULT_REFERENCE,
    gap_limit_min: float = DEFAULT_GAP_LIMIT_MIN,
    max_messages: int = DEFAULT_MAX_MESSAGES,
    memory_limit: str | None = None,
    threads: int | None = None,
    progress: Callable[[float, str], None] | None = None,
    time_zone: str | None = None,
) -> Records:
    """Read and check record files (CSV and Parquet, globs allowed).

    Parameters
    ----------
    paths : Source, path or glob, or an iterable of them
        Record files. Parquet files with the same columns are read as one columnar scan.
        A :class:`model.base.files.Source` is named by its name in every message; a path
        by the path as given. Parquet bytes are written to a private folder (duckdb and
        pyarrow read Parquet by path) that :meth:`Records.close` removes; CSV bytes are
        read as they are.
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
    time_zone : str, optional
        The IANA time zone (``Europe/London``) of times written without a UTC offset
        (default: as written, with no clock changes); see :mod:`model.io.record_times`.

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
    if isinstance(gap_limit_min, bool) or not (
        isinstance(gap_limit_min, (int, float)) and np.isfinite(gap_limit_min) and gap_limit_min > 0
    ):
        raise InputError("gap limit", gap_limit_min, "expected a positive number of minutes")
    zone = check_time_zone(time_zone)
    step = progress or (lambda f, t: None)
    files = expand_paths(paths if not isinstance(paths, (str, os.PathLike, Source)) else [paths])
    step(0.0, f"Reading the headers of {len(files)} file(s)")
    files, written = _parquet_on_disk(files)
    try:
        specs = [inspect_file(f) for f in files]
    except BaseException:
        _remove(written)
        raise
    if all(s.format == "parquet" for s in specs) and plain_size(memory_limit):
        # Parquet only: duckdb opens when a query first needs it (the compiled path of a
        # clean file never does); its settings and views are kept until then.
        con, tmp = LazyConnection(memory_limit, threads, specs), None
    else:
        con, tmp = connect(memory_limit, threads)
    try:
        with file_failures(specs):
            report, rej_rows, gl, per_file = _build_views(con, tmp, specs, reference, gap_limit_min, step, zone)
    except BaseException:
        con.close()
        _remove(tmp)
        _remove(written)
        raise
    recs = Records(con, specs, report, gl, reference, tmp, _written_dir=written, time_zone=zone)
    #: Each file's ``prepared`` query and row count, and the agent names as read.
    recs.file_sql, recs.file_rows, recs.agent_map = (per_file["file_sql"], per_file["file_rows"], per_file["agent_map"])
    recs.csv_groups, recs.raw_sql = per_file["groups"], per_file["raw_sql"]
    recs.report.file_rows = list(recs.file_rows)
    recs.report.issues = pd.DataFrame(rej_rows, columns=["file", "row", "kind", "column", "value", "message"])
    recs._rejected = len(rej_rows)
    recs._max_messages = max_messages
    step(0.4, "Records ready")
    return recs


def _parquet_on_disk(files: list[Source]) -> tuple[list[Source], str | None]:
    """The sources, Parquet bytes among them written to a private folder (None: none were).

    The copies are named by their place in the list only; the sources keep their names, so
    no message ever names a copy.
    """
    if not any(f.path is None and f.suffix.lower() == ".parquet" for f in files):
        return files, None
    import tempfile

    folder = tempfile.mkdtemp(prefix="gas-ledger-records-")
    out = []
    try:
        for i, f in enumerate(files):
            if f.path is None and f.suffix.lower() == ".parquet":
                copy = Path(folder) / f"{i:04d}.parquet"
                copy.write_bytes(f.read_bytes())
                f = Source(f.name, path=copy)
            out.append(f)
    except BaseException:
        _remove(folder)
        raise
    return out, folder


def _remove(folder: str | None) -> None:
    """Remove a private folder of the reader, if there is one."""
    if folder:
        import shutil

        shutil.rmtree(folder, ignore_errors=True)


def _build_views(con, tmp, specs, reference, gap_limit_min, step, zone):
    """Read the CSV files and create the ``raw``, ``prepared``, ``checked`` and ``valid`` views."""
    report = ReadSummary(files=[s.name for s in specs], gap_limit_min=float(gap_limit_min))
    for s in specs:
        if s.ignored:
            report.notes.append(f"{s.name}: ignored column(s) {', '.join(s.ignored)}")
    selects = []
    #: The raw SELECT of each file on its own, and its number of rows, for per-file work.
    file_selects: dict[int, str] = {}
    file_rows: dict[int, int] = {}
    #: The raw SELECT of each group of CSV files read as one table, with the files it holds.
    group_sql: list = []
    rej_rows: list = []
    # Parquet files with identical columns and types read as one scan.
    groups: dict = {}
    for i, s in enumerate(specs):
        if s.format == "parquet":
            key = tuple(sorted(s.types.items())) + tuple(sorted((k, c.source, c.factor) for k, c in s.columns.items()))
            groups.setdefault(key, []).append(i)
    for idx in groups.values():
        s = specs[idx[0]]
        names = "[" + ", ".join(_sql_str(specs[i].path) for i in idx) + "]"
        src = (
            f"(SELECT *, list_position({names}, filename) - 1 + 0 AS _grp, "
            f"file_row_number + 1 AS _row FROM read_parquet({names}, filename=true, file_row_number=true))"
        )
        fileno_map = "CASE _grp " + " ".join(f"WHEN {j} THEN {i}" for j, i in enumerate(idx)) + " END"
        selects.append(_raw_select(s, -1, f"(SELECT *, {fileno_map} AS _fileno FROM {src})", zone))
        for i in idx:
            one = (
                f"(SELECT *, file_row_number + 1 AS _row FROM "
                f"read_parquet({_sql_str(specs[i].path)}, file_row_number=true))"
            )
            file_selects[i] = _raw_select(specs[i], i, one, zone)
            file_rows[i] = _parquet_rows(specs[i].path)
    # CSV files of one layout (the same header and units) are read as one table.
    csv_groups: dict = {}
    for i, s in enumerate(specs):
        if s.format == "csv":
            key = (tuple(s.names), tuple(sorted((k, c.source, c.factor) for k, c in s.columns.items())))
            csv_groups.setdefault(key, []).append(i)
    done = 0
    for j, idx in enumerate(csv_groups.values()):
        s = specs[idx[0]]
        step(0.05 + 0.25 * done / max(len(specs), 1), f"Reading {Path(s.name).name}")
        done += len(idx)
        table, rows, rows_of = csv_table(con, [(i, specs[i]) for i in idx], j, tmp)
        rej_rows.extend(rows)
        name = f"csv_{j}"
        con.register(name, table)
        selects.append(_raw_select(s, -1, name, zone))
        for i in idx:
            one = name if len(idx) == 1 else f"(SELECT * FROM {name} WHERE _fileno = {i})"
            file_selects[i] = _raw_select(specs[i], i, one, zone)
            file_rows[i] = rows_of[i]
        group_sql.append((idx, _raw_select(s, -1, name, zone)))
    # The CSV files are read (in file order, for their line numbers); every later query
    # orders what it needs by file and row, so duckdb may stream in any order.
    con.execute("SET preserve_insertion_order = false")
    raw_sql = " UNION ALL BY NAME ".join(selects)
    con.execute("CREATE OR REPLACE TEMP VIEW raw AS " + raw_sql)
    # Agent names: normalise the few distinct values in Python with the reference's rules.
    step(0.35, "Checking agents")
    distinct = _distinct_agents(con, specs, file_selects, group_sql)
    amap: list[tuple[str, str, float]] = []
    for raw in distinct:
        agent_key = normalise_agent_name(raw)
        if agent_key in ("none", "no_agent", "-", "tiva"):
            amap.append((raw, "none", 0.0))
        elif agent_key in reference.agents and reference.agents[agent_key].kind == "volatile":
            amap.append((raw, agent_key, float(reference.agents[agent_key].vaporizer_max)))
    agent_case = (
        ("CASE agent_raw " + " ".join(f"WHEN {_sql_str(r)} THEN {_sql_str(k)}" for r, k, _ in amap) + " END")
        if amap
        else "NULL::VARCHAR"
    )
    dial_case = (
        ("CASE agent_raw " + " ".join(f"WHEN {_sql_str(r)} THEN {d!r}" for r, _, d in amap) + " END")
        if amap
        else "NULL::DOUBLE"
    )
    a = AIR_O2_FRACTION  # US Standard Atmosphere 1976 (see model.reference)
    prepared = f"""
    WITH r AS (
      SELECT src.*, {agent_case} AS agent, {dial_case} AS max_dial,
        coalesce(ts_ms / 60000.0, elapsed) AS t_min,
        CASE WHEN has_ts = 1 THEN CAST(date_trunc('month', ts) AS DATE)
             ELSE CAST(date_trunc('month', day) AS DATE) END AS month,
        CASE WHEN has_ts = 1 THEN ts ELSE day END AS start_hint
      FROM {_SOURCE} AS src
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
    """
    con.execute("CREATE OR REPLACE TEMP VIEW prepared AS " + prepared.replace(_SOURCE, "raw"))
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
      {_band_sql("fgf")} AS band
    FROM v
    """)
    per_file = {
        "file_sql": [prepared.replace(_SOURCE, f"({file_selects[i]})") for i in range(len(specs))],
        "file_rows": [int(file_rows[i]) for i in range(len(specs))],
        "agent_map": {r: (k, d) for r, k, d in amap},
        "groups": [(idx, prepared.replace(_SOURCE, f"({sql})")) for idx, sql in group_sql],
        "raw_sql": raw_sql,
    }
    return report, rej_rows, gl, per_file
