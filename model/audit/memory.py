"""The in-memory audit engine: per-case time checks, integration and sums in numpy after one sort."""

from __future__ import annotations

from typing import Any, NamedTuple

import numpy as np
import pandas as pd

from model.audit.result import BAND_COLUMNS
from model.circle import rebreathed_share
from model.freshgas import FLOW_BANDS
from model.io.record_files import file_failures
from model.io.record_reading import Records

# --------------------------------------------------------------------------------------
# The in-memory engine: the same rules as the SQL views ``checked`` and ``valid`` and
# ``_case_sql``, computed with numpy over samples sorted once by case and file order.
# Used when the records fit in memory (see ``IN_MEMORY_ROWS``); tests check that both
# engines give the same cases.

#: Largest number of rows audited in memory with numpy; beyond it duckdb's out-of-core
#: window functions run (slower, bounded memory).
IN_MEMORY_ROWS = 20_000_000


#: Number fields checked by the compiled row checks (the rest in numpy).
_CORE_NUMBERS = ("o2", "air", "n2o", "dial", "end_tidal")


def _column(table, name):
    col = table[name]
    return col.combine_chunks() if hasattr(col, "combine_chunks") else col


def _ints(table, name) -> np.ndarray:
    """An integer column as int64 (no copy when it is one)."""
    return np.asarray(_column(table, name).to_numpy(zero_copy_only=False), dtype=np.int64)


def _float(table, name) -> np.ndarray:
    """A numeric column as float64 with NaN for nulls."""
    return np.asarray(_column(table, name).to_numpy(zero_copy_only=False), dtype=float)


def _first_in_file_order(idx, fileno, row, limit):
    """The first ``limit`` of the positions ``idx``, in file and row order (as the SQL engine lists them)."""
    if len(idx) > 1:
        idx = idx[np.lexsort((row[idx], fileno[idx]))]
    return idx[:limit]


class _Texts:
    """A text column as codes (one per row, in file order) into its distinct values."""

    def __init__(self, codes: np.ndarray, values):
        self.codes = codes
        self.values = values


def _text_codes(col) -> _Texts:
    """Codes of a text column (pyarrow, plain or dictionary) into its values as the SQL reads them.

    As ``NULLIF(trim(x), '')``: spaces trimmed, empty is missing; worked out once per
    distinct value; a missing value has the code ``len(values)``.
    """
    import pyarrow as pa
    import pyarrow.compute as pc

    arr = col.combine_chunks() if isinstance(col, pa.ChunkedArray) else col
    if not pa.types.is_dictionary(arr.type):
        arr = pc.dictionary_encode(arr)
    arr.dictionary.validate(full=True)  # text that is not UTF-8 fails here (ArrowInvalid), not later
    values = pc.utf8_trim(arr.dictionary.cast(pa.string()), characters=" ")
    values = pc.if_else(pc.equal(values, ""), pa.scalar(None, pa.string()), values)
    recoded = pc.dictionary_encode(values)
    names = recoded.dictionary
    remap = np.append(recoded.indices.fill_null(len(names)).to_numpy(zero_copy_only=False).astype(np.int64), len(names))
    indices = arr.indices if arr.null_count == 0 else arr.indices.fill_null(-1)
    idx = np.asarray(indices.to_numpy(zero_copy_only=False), dtype=np.int64)
    if arr.null_count == 0 and np.array_equal(remap[:-1], np.arange(len(remap) - 1)):
        return _Texts(idx, names)  # each value already trimmed, distinct and present: codes as read
    return _Texts(remap[idx], names)  # index -1 (missing) takes the last entry: missing


def _is_text(t) -> bool:
    import pyarrow as pa

    t = t.value_type if pa.types.is_dictionary(t) else t
    return pa.types.is_string(t) or pa.types.is_large_string(t)


def read_parquet_file(recs: Records, index: int):
    """Read one Parquet file of a record set with pyarrow, each column once.

    Returns
    -------
    table : pyarrow.Table or None
        The columns the engine takes from the ``prepared`` query (``problem_a`` all
        empty), when every row passes checks at least as strict as the SQL row checks;
        None when some row may not (the SQL checks then run on the file, and say which).
    texts : dict or None
        Case id and theatre as codes (:class:`_Texts`); None when a text column is not
        text in the file (the SQL's text form is then used row by row).

    Raises
    ------
    InputError
        The file cannot be read to the end (a damaged page, text that is not UTF-8): one
        message naming this file, as the readers name it
        (:func:`model.io.record_files.file_failures`). pyarrow checks more than duckdb (a
        gzip page's length, say), so the failure is told here, where the file is known.

    Notes
    -----
    The fast checks only ever refuse more than the SQL checks (``model.io.records``): a
    row they accept has no row-level problem there. Values are computed as in the SQL
    (each number ``CAST(x AS DOUBLE) * factor``, times as whole milliseconds since 1970 /
    60000), so the results are the same to the last bit.
    """
    with file_failures([recs.files[index]]):
        return _read_parquet_file(recs, index)


def _read_parquet_file(recs: Records, index: int):
    """:func:`read_parquet_file` without the naming of failures."""
    import pyarrow as pa
    import pyarrow.parquet as pq

    from model.io.record_files import MAX_FLOW_L_MIN, MAX_TOTAL_FLOW_L_MIN, NUMBER_FIELDS

    rf = recs.files[index]
    c = rf.columns
    schema = pq.read_schema(rf.path)
    text_fields = [f for f in ("case_id", "theatre", "agent") if f in c]
    if not all(_is_text(schema.field(c[f].source).type) for f in text_fields):
        return None, None
    numbers = [f for f in NUMBER_FIELDS if f in c]
    ttype = schema.field(c["time"].source).type if "time" in c else None
    # Times read in a time zone go through the SQL (its clock-change checks).
    fast = _columns_read_as_stored(rf, schema, numbers, ttype) and (ttype is None or recs.time_zone is None)
    sources = (
        [c[f].source for f in text_fields]
        + ([c["time"].source] if fast and ttype is not None else [])
        + ([c[f].source for f in numbers] if fast else [])
    )
    table = pq.read_table(rf.path, columns=sources, read_dictionary=[c[f].source for f in text_fields])
    texts = {f: _text_codes(table[c[f].source]) for f in text_fields}
    if "theatre" not in texts:
        texts["theatre"] = _Texts(np.zeros(table.num_rows, dtype=np.int64), pa.array([], pa.string()))
    case_texts = {k: texts[k] for k in ("case_id", "theatre")}
    if not fast:
        return None, case_texts
    n = table.num_rows
    # Row checks: the case id and agent, flows, dial and end-tidal in one compiled pass
    # (``rows_pass`` below); numpy only for what is rare (nulls, other number columns).
    ok = np.True_
    known, volatile, max_dial, canon, canon_code = _agent_table(recs, texts["agent"])
    acode = texts["agent"].codes
    values, nan_missing = {}, {}
    for f in numbers:
        col = table[c[f].source]
        x = col.to_numpy() if col.null_count == 0 else col.cast(pa.float64()).to_numpy(zero_copy_only=False)
        x = x.astype(np.float64, copy=False)
        if float(c[f].factor) != 1.0:  # x * 1.0 is x: skip the pass
            x = x * float(c[f].factor)
        nan_missing[f] = col.null_count > 0
        if col.null_count:
            valid = col.is_valid().to_numpy(zero_copy_only=False)
            ok &= ~valid | np.isfinite(x)
            x = np.where(valid, x, np.nan)
        elif f not in _CORE_NUMBERS:
            ok &= np.isfinite(x)
        values[f] = x
    # The flows, dial and end-tidal checked in one compiled pass (model.audit.kernel.rows_pass).
    flow_fields = ("o2", "air", "n2o")
    from model.audit.kernel import rows_pass

    ok_all = bool(ok.all()) and rows_pass(
        texts["case_id"].codes,
        len(texts["case_id"].values),
        acode,
        known,
        volatile,
        max_dial,
        tuple(values.get(f) for f in flow_fields),
        values.get("dial"),
        values.get("end_tidal"),
        np.array(
            [nan_missing.get(f, True) for f in flow_fields]
            + [nan_missing.get("dial", True), nan_missing.get("end_tidal", True)]
        ),
        max_flow_l_min=MAX_FLOW_L_MIN,
        max_total_flow_l_min=MAX_TOTAL_FLOW_L_MIN,
    )
    dial = values.get("dial", np.full(n, np.nan))
    et = values.get("end_tidal", np.full(n, np.nan))
    if ttype is not None:
        times = _timestamp_times(table[c["time"].source], n)
    else:
        elapsed = values["elapsed"]
        times = _SampleTimes(elapsed, pa.nulls(n, pa.timestamp("us")), pa.nulls(n, pa.date32()), ~np.isnan(elapsed))
    if times is None or not (ok_all and bool(ok.all()) and bool(times.ok.all())):
        return None, case_texts
    # Flows as read: every row passed the checks, so none is negative; a missing flow (NaN)
    # counts as none in both paths of the engine.
    zeros = np.zeros(n)
    flow = {f: values.get(f, zeros) for f in ("o2", "air", "n2o")}
    out = pa.table(
        {
            "_fileno": pa.array(np.full(n, index, dtype=np.int32)),
            "_row": pa.array(np.arange(1, n + 1, dtype=np.int64)),
            "agent": pa.DictionaryArray.from_arrays(pa.array(canon_code[acode]), pa.array(canon, pa.string())),
            "t_min": pa.array(times.t_min),
            "month": times.month,
            "start_hint": times.start,
            "o2": pa.array(flow["o2"]),
            "air": pa.array(flow["air"]),
            "n2o": pa.array(flow["n2o"]),
            "dial": pa.array(dial),
            "end_tidal": pa.array(et),
            "problem_a": pa.nulls(n, pa.string()),
        }
    )
    return out, case_texts


def _columns_read_as_stored(rf, schema, numbers: list, ttype) -> bool:
    """Whether the file's columns can be taken as stored, without the SQL's conversions.

    Flows in parts, no date column, numbers stored as numbers and the time (if any) as a
    timestamp without time zone.
    """
    import pyarrow as pa

    c = rf.columns
    return (
        rf.flow_mode == "parts"
        and "date" not in c
        and all(
            pa.types.is_integer(schema.field(c[f].source).type) or pa.types.is_floating(schema.field(c[f].source).type)
            for f in numbers
        )
        and (ttype is None or (pa.types.is_timestamp(ttype) and ttype.tz is None))
    )


class _AgentTable(NamedTuple):
    """Each distinct agent text of a file (and "missing", last) looked up once."""

    known: np.ndarray  # bool: the text names an agent
    volatile: np.ndarray  # bool: a volatile one
    max_dial: np.ndarray  # its highest dial [% v/v]
    canon: list  # the agents' names, sorted
    canon_code: np.ndarray  # int32: each text's code into ``canon``


def _agent_table(recs: Records, agent_texts: _Texts) -> _AgentTable:
    """Agent texts looked up once each, as the SQL's CASE does."""
    agent_names = [recs.agent_map.get(v) for v in agent_texts.values.to_pylist()] + [None]
    canon = sorted({a[0] for a in agent_names if a is not None})
    return _AgentTable(
        known=np.array([a is not None for a in agent_names]),
        volatile=np.array([a is not None and a[0] != "none" for a in agent_names]),
        max_dial=np.array([a[1] if a else 0.0 for a in agent_names]),
        canon=canon,
        canon_code=np.array([canon.index(a[0]) if a else 0 for a in agent_names], dtype=np.int32),
    )


class _SampleTimes(NamedTuple):
    """Time of each sample in minutes, with the start and month columns of the case table."""

    t_min: np.ndarray  # [min]
    start: object  # pyarrow column of start times (or nulls)
    month: object  # pyarrow column the month is read from (or nulls)
    ok: np.ndarray  # bool: the time is present


def _timestamp_times(tcol, n: int) -> _SampleTimes | None:
    """Sample times from the file's timestamp column ``tcol`` (without one, the elapsed minutes are the times).

    None when a timestamp is missing or before 1970 (the SQL checks then run on the file).
    Times are whole milliseconds since 1970 / 60000, as the SQL computes them.
    """
    import pyarrow as pa

    if tcol.null_count:
        return None
    tcol = tcol.combine_chunks() if isinstance(tcol, pa.ChunkedArray) else tcol
    if tcol.type.unit == "ms":  # whole milliseconds already: no conversion pass
        ms = tcol.to_numpy().view(np.int64)
    elif tcol.type.unit == "ns":  # nanoseconds cut to microseconds, as the SQL reads them
        tcol = pa.array(tcol.to_numpy().view(np.int64) // 1000, pa.timestamp("us"))
        ms = tcol.to_numpy().view(np.int64) // 1000
    else:  # duckdb TIMESTAMP: microseconds, then whole milliseconds
        ms = tcol.cast(pa.timestamp("us")).to_numpy().view(np.int64) // 1000
    if n and ms.min() < 0:
        return None
    # Start and month are taken from a case's first sample only (``_case_frame``), in
    # the file's own time type: the time itself gives the same "%Y-%m" text as the
    # SQL's month (date_trunc) without a calendar conversion of every row.
    return _SampleTimes(ms / 60000.0, tcol, tcol, np.ones(n, dtype=bool))


class _EngineResult(NamedTuple):
    """What an engine gives for the records it worked on (unpacks as a 4-tuple)."""

    raw: pd.DataFrame  # as the SQL case query
    counts: dict  # rows set aside by kind (``problem_a`` kinds and the time kinds)
    time_rows: list  # (fileno, row, kind, case_id, t_min, prev_max) of rows set aside by time
    gap_rows: list  # (fileno, row, case_id, t_min, dt_raw) of gaps


class _CaseCodes(NamedTuple):
    """Case of each row as a code into its names (and theatre codes, from ``texts``)."""

    code: np.ndarray  # int64, one per row
    case_names: Any  # pyarrow array of the case ids, by code
    theatre_code: np.ndarray | None  # with ``texts`` only
    row: np.ndarray | None  # the row numbers, when read on the way
    in_order: bool  # with ``texts``: the rows are the file's, in file order


class _Intervals(NamedTuple):
    """Interval from each valid sample to the next of its case, in min."""

    same_next: np.ndarray  # the next sample is of the same case
    dt_raw: np.ndarray  # the interval, NaN at a case's last sample
    gap: np.ndarray  # longer than the gap limit
    dt: np.ndarray  # the time counted: 0 at gaps and last samples


class _Groups(NamedTuple):
    """Groups of valid samples (case x agent): keys, first sample, group of each sample."""

    uniq: np.ndarray
    first: np.ndarray
    inv: np.ndarray
    contiguous: bool  # the samples of a group are adjacent, groups in key order


def _engine_table(recs: Records, source, texts: dict | None):
    """The checked rows to work on: the query ``source`` run, or the columns already read."""
    if not isinstance(source, str):  # the columns already read (``read_parquet_file``)
        return source
    text_cols = "" if texts else "case_id, theatre, "
    rel = recs.con.sql(f"""SELECT _fileno, _row, {text_cols}agent, t_min, month, start_hint,
        greatest(o2, 0) AS o2, greatest(air, 0) AS air, greatest(n2o, 0) AS n2o, dial, end_tidal, problem_a
        FROM ({source})""")
    table = rel.arrow()
    if hasattr(table, "read_all"):
        table = table.read_all()
    return table


def _problem_counts(problem_a) -> dict:
    """Rows with a row-level problem (``problem_a``), by kind."""
    import pyarrow.compute as pc

    if problem_a.null_count == len(problem_a):
        return {}
    vc = pc.value_counts(problem_a.drop_null())
    return {v["values"].as_py(): v["counts"].as_py() for v in vc}


def _case_codes(table, texts: dict | None, from_query: bool) -> _CaseCodes:
    """Case codes of the rows: from ``texts`` (one file's codes) or by encoding the case ids."""
    import pyarrow.compute as pc

    if not texts:
        case_codes = pc.dictionary_encode(_column(table, "case_id").fill_null(""))
        code = case_codes.indices.to_numpy(zero_copy_only=False).astype(np.int64)
        return _CaseCodes(code, case_codes.dictionary, None, None, False)
    n = table.num_rows
    row = None
    # Parquet rows are numbered from 1 in file order: row - 1 is the row's place in the file.
    if from_query:
        row = _ints(table, "_row")
        in_order = n == len(texts["case_id"].codes) and bool(np.all(row == np.arange(1, n + 1)))
    else:
        in_order = n == len(texts["case_id"].codes)
    pos = slice(None) if in_order else (row if row is not None else _ints(table, "_row")) - 1
    return _CaseCodes(texts["case_id"].codes[pos], texts["case_id"].values, texts["theatre"].codes[pos], row, in_order)


def _sort_order(code: np.ndarray, fileno: np.ndarray, row: np.ndarray) -> tuple[np.ndarray, bool]:
    """Order of the rows by case, then file, then row; and whether they are in it already.

    Records usually come grouped by case in file order (case codes number cases by first
    appearance), and then no sort is needed.
    """
    n = len(code)
    if n and fileno.max() < (1 << 8) and row.max() < (1 << 35) and code.max() < (1 << 20):
        key = (code << 43) | (fileno << 35) | row
        in_key_order = bool(np.all(key[1:] > key[:-1]))
        del key
        order = np.arange(n) if in_key_order else np.argsort((code << 43) | (fileno << 35) | row, kind="stable")
        return order, in_key_order
    return np.lexsort((row, fileno, code)), False


def _time_checks(code_s, t_s, ok_s, order, fileno, row, case_names, max_messages: int):
    """Samples set aside for a duplicate or backward time.

    Found through the running maximum of the earlier A-valid times of the same case
    (exactly, through ranks).

    Returns
    -------
    valid_s : ndarray of bool
        The samples (in sorted order) that pass.
    counts : dict
        ``duplicate_time`` and ``time_backwards`` counts, when there are any.
    time_rows : list of tuple
        The first of them (see :class:`_EngineResult`).
    """
    all_ok = bool(ok_s.all())
    t_ok = t_s if all_ok else t_s[ok_s]
    c_ok = code_s if all_ok else code_s[ok_s]
    monotonic = bool(np.all((np.diff(t_ok) > 0) | (c_ok[1:] != c_ok[:-1]))) if len(t_ok) > 1 else True
    if not ok_s.any() or monotonic:
        return ok_s, {}, []
    _, rank = np.unique(np.where(ok_s, t_s, -np.inf), return_inverse=True)
    key = code_s * (1 << 32) + np.where(ok_s, rank.astype(np.int64) + 1, 0)
    cummax = np.maximum.accumulate(key)
    prev = np.concatenate(([-1], cummax[:-1]))
    has_prev = prev > code_s * (1 << 32)
    dup = ok_s & has_prev & (key == prev)
    back = ok_s & has_prev & (key < prev)
    valid_s = ok_s & ~dup & ~back
    if not (dup.any() or back.any()):
        return valid_s, {}, []
    counts = {"duplicate_time": int(dup.sum()), "time_backwards": int(back.sum())}
    # Time of the earlier maximum, for the message.
    prev_rank = np.where(has_prev, (prev - code_s * (1 << 32)) - 1, 0)
    sorted_t = np.unique(np.where(ok_s, t_s, -np.inf))
    bad = _first_in_file_order(np.flatnonzero(dup | back), fileno[order], row[order], max_messages)
    time_rows = []
    for i in bad:
        j = order[i]
        time_rows.append(
            (
                int(fileno[j]),
                int(row[j]),
                "duplicate_time" if dup[i] else "time_backwards",
                case_names[int(code_s[i])].as_py(),
                float(t_s[i]),
                float(sorted_t[prev_rank[i]]),
            )
        )
    return valid_s, counts, time_rows


def _intervals(cv: np.ndarray, tv: np.ndarray, gap_limit_min: float) -> _Intervals:
    """Interval to the next sample of the same case; a longer one than the limit is a gap."""
    m = len(cv)
    same_next = np.zeros(m, dtype=bool)
    dt_raw = np.full(m, np.nan)
    if m:
        same_next[:-1] = cv[1:] == cv[:-1]
        dt_raw[:-1] = np.where(same_next[:-1], np.diff(tv), np.nan)
    dt0 = np.where(np.isnan(dt_raw), 0.0, dt_raw)
    gap = dt0 > gap_limit_min
    return _Intervals(same_next, dt_raw, gap, np.where(gap, 0.0, dt0))


def _gap_rows(iv: _Intervals, vidx, fileno, row, case_names, cv, tv, max_messages: int) -> list:
    """The first gaps in file order: (fileno, row, case_id, t_min, dt_raw)."""
    gap_at = np.flatnonzero(iv.gap)
    if len(gap_at):
        gap_at = _first_in_file_order(gap_at, fileno[vidx], row[vidx], max_messages)
    return [
        (int(fileno[vidx[i]]), int(row[vidx[i]]), case_names[int(cv[i])].as_py(), float(tv[i]), float(iv.dt_raw[i]))
        for i in gap_at
    ]


def _run_lengths(iv: _Intervals, high: np.ndarray) -> np.ndarray:
    """Length of the high-flow run up to each sample, in min.

    A difference of the running sum of high-flow time; a run ends at a sample below the
    threshold or before a gap.
    """
    m = len(high)
    endflag = ~high | iv.gap
    new_run = np.ones(m, dtype=bool)
    if m:
        new_run[1:] = ~iv.same_next[:-1] | endflag[:-1]
    w = iv.dt * high
    cs = np.cumsum(w)
    start_idx = np.maximum.accumulate(np.where(new_run, np.arange(m), 0))
    return cs - (cs[start_idx] - w[start_idx])


def _groups(gkey: np.ndarray) -> _Groups:
    """Groups of equal keys (case x agent); no second sort when they are contiguous already."""
    step = np.diff(gkey)
    contiguous = len(gkey) > 0 and bool(np.all(step >= 0))
    if contiguous:
        first = np.concatenate(([0], np.flatnonzero(step) + 1))
        return _Groups(gkey[first], first, np.cumsum(np.concatenate(([0], step != 0))), True)
    uniq, first, inv = np.unique(gkey, return_index=True, return_inverse=True)
    return _Groups(uniq, first, inv, False)


def _longest_runs(groups: _Groups, high: np.ndarray, run_len: np.ndarray) -> np.ndarray:
    """Longest high-flow run of each group, in min."""
    g = len(groups.uniq)
    if groups.contiguous:
        return np.maximum.reduceat(np.where(high, run_len, 0.0), groups.first) if g else np.zeros(0)
    longest = np.zeros(g)
    np.maximum.at(longest, groups.inv[high], run_len[high])
    return longest


def _band_minutes(groups: _Groups, fgf: np.ndarray, dt: np.ndarray) -> np.ndarray:
    """Minutes of each group in each flow band, ``(groups, bands)``."""
    g, nb = len(groups.uniq), len(FLOW_BANDS)
    edges = np.array([upper for _, upper in FLOW_BANDS[:-1]])
    band = np.searchsorted(edges, fgf, side="left")  # the rule of model.freshgas.flow_band
    return np.bincount(groups.inv * nb + band, weights=dt, minlength=g * nb).reshape(g, nb)


def _numpy_engine(
    recs: Records,
    high_flow_l_min: float,
    minute_ventilation_l_min: float,
    source: str = "SELECT * FROM prepared",
    texts: dict | None = None,
) -> _EngineResult:
    """Time checks, integration and per-case sums in numpy.

    Parameters
    ----------
    recs : Records
        The record set (its connection, gap limit and message limit).
    high_flow_l_min : float
        Flows above this make a high-flow run. [L/min]
    minute_ventilation_l_min : float
        Minute ventilation of the rebreathed share. [L/min]
    source : str or pyarrow.Table
        The SQL query of the checked rows to work on (the view ``prepared`` of every file,
        or the ``prepared`` query of one file, ``Records.file_sql``), or those columns
        already read by :func:`read_parquet_file`.
    texts : dict, optional
        From the same: the case ids and theatres of that one file as codes, so no text
        travels per row.

    Returns
    -------
    _EngineResult
        ``(raw, counts, time_rows, gap_rows)``: the cases as the SQL case query, rows set
        aside by kind, rows set aside by the time checks, gaps.
    """
    table = _engine_table(recs, source, texts)
    n = table.num_rows
    problem_a = _column(table, "problem_a")
    counts = _problem_counts(problem_a)
    cc = _case_codes(table, texts, isinstance(source, str))
    code, case_names = cc.code, cc.case_names
    t = _float(table, "t_min")
    if n and not isinstance(source, str) and texts and cc.in_order and problem_a.null_count == n:
        # Rows of one file, each valid: one compiled pass when they come grouped by case in time order.
        fast = _compiled_pass(
            recs, table, texts, code, t, case_names, cc.theatre_code, high_flow_l_min, minute_ventilation_l_min
        )
        if fast is not None:
            raw, time_rows, gap_rows = fast
            return _EngineResult(raw, counts, time_rows, gap_rows)
    ok_a = problem_a.is_null().to_numpy(zero_copy_only=False)
    fileno = _ints(table, "_fileno")
    row = cc.row if cc.row is not None else _ints(table, "_row")
    order, in_key_order = _sort_order(code, fileno, row)
    # Already in order (the usual case): the sorted views are the columns themselves.
    code_s, t_s, ok_s = (code, t, ok_a) if in_key_order else (code[order], t[order], ok_a[order])
    valid_s, time_counts, time_rows = _time_checks(
        code_s, t_s, ok_s, order, fileno, row, case_names, recs._max_messages
    )
    counts.update(time_counts)
    all_valid = bool(valid_s.all())
    vidx = order if in_key_order and all_valid else order[valid_s]
    cv, tv = (code, t) if in_key_order and all_valid else (code[vidx], t[vidx])
    m = len(vidx)
    iv = _intervals(cv, tv, recs.gap_limit_min)
    gap_rows = _gap_rows(iv, vidx, fileno, row, case_names, cv, tv, recs._max_messages)

    identity = (in_key_order and all_valid) or (m == n and bool(np.all(vidx == np.arange(n))))

    def take(name):
        values = _float(table, name)
        values = np.where(np.isnan(values), 0.0, values)
        return values if identity else values[vidx]

    o2, air, n2o = take("o2"), take("air"), take("n2o")
    fgf = o2 + air + n2o
    dial_raw = _float(table, "dial")
    dial_raw = dial_raw if identity else dial_raw[vidx]
    from_et = np.isnan(dial_raw)
    agent_code, agent_names, none_code = _agent_codes(table)
    agent_code = agent_code if identity else agent_code[vidx]
    # "none" compared once as a name, then as its code (no text per row).
    is_none = (agent_code == none_code) if none_code >= 0 and m else np.zeros(m, dtype=bool)
    # Dose: the dial, else the end-tidal concentration, 0 without an agent (passes skipped
    # when no sample needs them).
    dose = np.where(from_et, take("end_tidal"), dial_raw) if from_et.any() else dial_raw
    if is_none.any():
        dose = np.where(is_none, 0.0, dose)
    from_et = from_et & ~is_none
    high = fgf > high_flow_l_min
    run_len = _run_lengths(iv, high)
    # Groups: case and agent.
    n_agents = max(len(agent_names), 1)
    groups = _groups(cv * n_agents + agent_code)
    uniq, inv, g, dt, gap = groups.uniq, groups.inv, len(groups.uniq), iv.dt, iv.gap

    def gsum(weights):
        return np.bincount(inv, weights=weights, minlength=g)

    band_min = _band_minutes(groups, fgf, dt)
    sums = {
        "samples": np.bincount(inv, minlength=g).astype(np.int64),
        "minutes": gsum(dt),
        "gaps": np.bincount(inv, weights=gap, minlength=g).astype(np.int64),
        "gap_min": gsum(np.where(gap, iv.dt_raw, 0.0)),
        "end_tidal_basis_min": gsum(np.where(from_et, dt, 0.0)),
        "oxygen_l": gsum(o2 * dt),
        "air_l": gsum(air * dt),
        "nitrous_oxide_l": gsum(n2o * dt),
        "vapour_integral": gsum(fgf * dose * dt),
        "rebreathed_min": gsum(rebreathed_share(fgf, minute_ventilation_l_min) * dt),
        **{col: band_min[:, k] for k, col in enumerate(BAND_COLUMNS)},
        "longest_high_flow_min": _longest_runs(groups, high, run_len),
    }
    raw = _case_frame(
        table,
        texts,
        cc.theatre_code if texts else None,
        vidx[groups.first],
        np.array(case_names.to_pylist(), dtype=object)[uniq // n_agents] if g else [],
        agent_names[uniq % n_agents] if g else [],
        sums,
    )
    return _EngineResult(raw, counts, time_rows, gap_rows)


def _month_text(month) -> list:
    """Month text ("%Y-%m") of each date or time, "unknown" when missing.

    Each distinct month is formatted once (a year's cases fall in a few months).
    """
    import pyarrow as pa
    import pyarrow.compute as pc

    secs = pc.cast(month, "timestamp[s]", safe=False)
    months = secs.to_numpy(zero_copy_only=False).astype("datetime64[M]")
    uniq, inv = np.unique(months, return_inverse=True)
    text = pc.strftime(pa.array(uniq.astype("datetime64[s]"), pa.timestamp("s")), "%Y-%m").fill_null("unknown")
    return np.array(text.to_pylist(), dtype=object)[inv.reshape(-1)].tolist()


def _case_frame(table, texts, theatre_code, vfirst, case_of_group, agent_of_group, sums) -> pd.DataFrame:
    """The per-case table of either path: names and start of each group's first row, then its sums."""
    import pyarrow as pa

    if texts:
        names = texts["theatre"].values.to_pylist() + [None]
        theatre = [names[k] if names[k] is not None else "unknown" for k in theatre_code[vfirst]]
    else:
        theatre = _column(table, "theatre").take(vfirst).fill_null("unknown").to_pylist()
    month = _month_text(_column(table, "month").take(vfirst))
    # The first valid sample of a group is its earliest (valid samples rise in time).
    start = _column(table, "start_hint").take(vfirst)
    if pa.types.is_timestamp(start.type):  # the SQL's TIMESTAMP: microseconds
        start = start.cast(pa.timestamp("us"))
    start = pd.to_datetime(pd.Series(start.to_pandas())).to_numpy()
    return pd.DataFrame(
        {"case_id": case_of_group, "agent": agent_of_group, "theatre": theatre, "month": month, "start": start, **sums}
    )


def _agent_codes(table):
    """Agent codes of each row, their names, and the code of "none" (-1 when absent)."""
    import pyarrow.compute as pc

    agent_dict = pc.dictionary_encode(_column(table, "agent"))
    agent_code = agent_dict.indices.fill_null(0).to_numpy(zero_copy_only=False).astype(np.int64)
    agent_names = np.array(agent_dict.dictionary.to_pylist(), dtype=object)
    none_codes = np.flatnonzero(agent_names == "none")
    return agent_code, agent_names, int(none_codes[0]) if len(none_codes) else -1


def _compiled_pass(recs, table, texts, code, t, case_names, theatre_code, high_flow_l_min, minute_ventilation_l_min):
    """The samples of one file integrated by :func:`model.audit.kernel.case_sums`.

    Returns ``(raw, time_rows, gap_rows)`` as :func:`_numpy_engine`, or None when the
    samples are not grouped by case in rising time (the numpy path then sorts and checks
    them).
    """
    from model.audit.kernel import SUM_COLUMNS, case_sums

    agent_code, agent_names, none_code = _agent_codes(table)
    n_agents = max(len(agent_names), 1)
    edges = np.array([upper for _, upper in FLOW_BANDS[:-1]])
    out = case_sums(
        code,
        agent_code,
        t,
        _float(table, "o2"),
        _float(table, "air"),
        _float(table, "n2o"),
        _float(table, "dial"),
        _float(table, "end_tidal"),
        n_agents=n_agents,
        none_code=none_code,
        gap_limit_min=recs.gap_limit_min,
        high_flow_l_min=high_flow_l_min,
        minute_ventilation_l_min=minute_ventilation_l_min,
        band_edges_l_min=edges,
    )
    if out is None:
        return None
    first, samples, gaps, sums, band_min, gap = out
    # File and row of the first gaps, for their messages (only the gaps' rows are looked up).
    at = np.flatnonzero(gap)
    fileno = np.asarray(_column(table, "_fileno").take(at).to_numpy(zero_copy_only=False), dtype=np.int64)
    row = np.asarray(_column(table, "_row").take(at).to_numpy(zero_copy_only=False), dtype=np.int64)
    keep = _first_in_file_order(np.arange(len(at)), fileno, row, recs._max_messages)
    gap_rows = [
        (int(fileno[k]), int(row[k]), case_names[int(code[i])].as_py(), float(t[i]), float(t[i + 1] - t[i]))
        for k, i in zip(keep, at[keep], strict=True)
    ]
    columns = {
        "samples": samples,
        "minutes": sums[:, 0],
        "gaps": gaps,
        **{name: sums[:, k] for k, name in enumerate(SUM_COLUMNS) if k},
        **{col: band_min[:, k] for k, col in enumerate(BAND_COLUMNS)},
    }
    order = [
        "samples",
        "minutes",
        "gaps",
        "gap_min",
        "end_tidal_basis_min",
        "oxygen_l",
        "air_l",
        "nitrous_oxide_l",
        "vapour_integral",
        "rebreathed_min",
        *BAND_COLUMNS,
        "longest_high_flow_min",
    ]
    raw = _case_frame(
        table,
        texts,
        theatre_code,
        first,
        np.array(case_names.to_pylist(), dtype=object)[code[first]],
        agent_names[agent_code[first]],
        {k: columns[k] for k in order},
    )
    return raw, [], gap_rows
