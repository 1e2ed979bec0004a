"""The in-memory audit engine: per-case time checks, integration and sums in numpy after one sort."""

from __future__ import annotations

import numpy as np
import pandas as pd

from model.audit.result import BAND_COLUMNS
from model.circle import rebreathed_share
from model.freshgas import FLOW_BANDS
from model.io.record_report import Records


# --------------------------------------------------------------------------------------
# The in-memory engine: the same rules as the SQL views ``checked`` and ``valid`` and
# ``_case_sql``, computed with numpy over samples sorted once by case and file order.
# Used when the records fit in memory (see ``IN_MEMORY_ROWS``); tests check that both
# engines give the same cases.

#: Largest number of rows audited in memory with numpy; beyond it duckdb's out-of-core
#: window functions run (slower, bounded memory).
IN_MEMORY_ROWS = 20_000_000


def _column(table, name):
    col = table[name]
    return col.combine_chunks() if hasattr(col, "combine_chunks") else col


def _float(table, name) -> np.ndarray:
    """A numeric column as float64 with NaN for nulls."""
    return np.asarray(_column(table, name).to_numpy(zero_copy_only=False), dtype=float)


def _numpy_engine(recs: Records, high_flow_l_min: float, minute_ventilation_l_min: float):
    """Time checks, integration and per-case sums in numpy.

    Returns
    -------
    raw : DataFrame
        As the SQL case query.
    counts : dict
        Rows set aside by kind (``problem_a`` kinds and the time kinds).
    time_rows : list of tuple
        (fileno, row, kind, case_id, t_min, prev_max) of rows set aside by the time checks.
    gap_rows : list of tuple
        (fileno, row, case_id, t_min, dt_raw) of gaps.
    """
    import pyarrow.compute as pc

    con = recs.con
    rel = con.sql("""SELECT _fileno, _row, case_id, theatre, agent, t_min, month, start_hint,
        greatest(o2, 0) AS o2, greatest(air, 0) AS air, greatest(n2o, 0) AS n2o, dial, end_tidal, problem_a
        FROM prepared""")
    table = rel.arrow()
    if hasattr(table, "read_all"):
        table = table.read_all()
    n = table.num_rows
    problem_a = _column(table, "problem_a")
    counts = {}
    if problem_a.null_count < n:
        vc = pc.value_counts(problem_a.drop_null())
        counts = {v["values"].as_py(): v["counts"].as_py() for v in vc}
    ok_a = problem_a.is_null().to_numpy(zero_copy_only=False)
    case_codes = pc.dictionary_encode(_column(table, "case_id").fill_null(""))
    code = case_codes.indices.to_numpy(zero_copy_only=False).astype(np.int64)
    case_names = case_codes.dictionary
    fileno = _column(table, "_fileno").to_numpy(zero_copy_only=False).astype(np.int64)
    row = _column(table, "_row").to_numpy(zero_copy_only=False).astype(np.int64)
    t = _float(table, "t_min")
    # One sort key: case, then file, then row. Records usually come grouped by case in file
    # order (case codes number cases by first appearance), and then no sort is needed.
    if n and fileno.max() < (1 << 8) and row.max() < (1 << 35) and code.max() < (1 << 20):
        key = (code << 43) | (fileno << 35) | row
        order = np.arange(n) if bool(np.all(key[1:] > key[:-1])) else np.argsort(key, kind="stable")
    else:
        order = np.lexsort((row, fileno, code))
    code_s, t_s, ok_s = code[order], t[order], ok_a[order]
    # Running maximum of the earlier A-valid times of the same case, exactly, through ranks.
    time_rows: list = []
    valid_s = ok_s.copy()
    nxt_same = np.zeros(len(code_s), dtype=bool)
    if len(code_s):
        nxt_same[:-1] = code_s[1:] == code_s[:-1]
    t_ok = t_s[ok_s]
    c_ok = code_s[ok_s]
    monotonic = bool(np.all((np.diff(t_ok) > 0) | (c_ok[1:] != c_ok[:-1]))) if len(t_ok) > 1 else True
    if ok_s.any() and not monotonic:
        _, rank = np.unique(np.where(ok_s, t_s, -np.inf), return_inverse=True)
        key = code_s * (1 << 32) + np.where(ok_s, rank.astype(np.int64) + 1, 0)
        cummax = np.maximum.accumulate(key)
        prev = np.concatenate(([-1], cummax[:-1]))
        has_prev = prev > code_s * (1 << 32)
        dup = ok_s & has_prev & (key == prev)
        back = ok_s & has_prev & (key < prev)
        valid_s = ok_s & ~dup & ~back
        if dup.any() or back.any():
            counts["duplicate_time"] = int(dup.sum())
            counts["time_backwards"] = int(back.sum())
            # Time of the earlier maximum, for the message.
            prev_rank = np.where(has_prev, (prev - code_s * (1 << 32)) - 1, 0)
            sorted_t = np.unique(np.where(ok_s, t_s, -np.inf))
            bad = np.flatnonzero(dup | back)[: recs._max_messages]
            for i in bad:
                j = order[i]
                time_rows.append((int(fileno[j]), int(row[j]), "duplicate_time" if dup[i] else "time_backwards",
                                  case_names[int(code_s[i])].as_py(), float(t_s[i]), float(sorted_t[prev_rank[i]])))
    vidx = order[valid_s]
    cv = code[vidx]
    tv = t[vidx]
    m = len(vidx)
    same_next = np.zeros(m, dtype=bool)
    dt_raw = np.full(m, np.nan)
    if m:
        same_next[:-1] = cv[1:] == cv[:-1]
        dt_raw[:-1] = np.where(same_next[:-1], np.diff(tv), np.nan)
    gap = np.nan_to_num(dt_raw, nan=0.0) > recs.gap_limit_min
    dt = np.where(gap, 0.0, np.nan_to_num(dt_raw, nan=0.0))
    gap_rows = [(int(fileno[vidx[i]]), int(row[vidx[i]]), case_names[int(cv[i])].as_py(), float(tv[i]),
                 float(dt_raw[i])) for i in np.flatnonzero(gap)[: recs._max_messages]]

    identity = m == n and bool(np.all(vidx == np.arange(n)))

    def take(name):
        values = np.nan_to_num(_float(table, name), nan=0.0)
        return values if identity else values[vidx]

    o2, air, n2o = take("o2"), take("air"), take("n2o")
    fgf = o2 + air + n2o
    dial_raw = _float(table, "dial")
    dial_raw = dial_raw if identity else dial_raw[vidx]
    from_et = np.isnan(dial_raw)
    agent_dict = pc.dictionary_encode(_column(table, "agent"))
    agent_code = agent_dict.indices.fill_null(0).to_numpy(zero_copy_only=False).astype(np.int64)
    agent_code = agent_code if identity else agent_code[vidx]
    agent_names = np.array(agent_dict.dictionary.to_pylist(), dtype=object)
    is_none = agent_names[agent_code] == "none" if m else np.zeros(0, dtype=bool)
    dose = np.where(is_none, 0.0, np.where(from_et, take("end_tidal"), np.nan_to_num(dial_raw, nan=0.0)))
    from_et = from_et & ~is_none
    # High-flow runs: a run ends at a sample below the threshold or before a gap.
    high = fgf > high_flow_l_min
    endflag = ~high | gap
    new_run = np.ones(m, dtype=bool)
    if m:
        new_run[1:] = ~same_next[:-1] | endflag[:-1]
    w = dt * high
    cs = np.cumsum(w)
    start_idx = np.maximum.accumulate(np.where(new_run, np.arange(m), 0))
    run_len = cs - (cs[start_idx] - w[start_idx])
    # Groups: case and agent.
    n_agents = max(len(agent_names), 1)
    gkey = cv * n_agents + agent_code
    step = np.diff(gkey)
    contiguous = m > 0 and bool(np.all(step >= 0))
    if contiguous:  # groups already contiguous: no second sort
        first = np.concatenate(([0], np.flatnonzero(step) + 1))
        uniq = gkey[first]
        inv = np.cumsum(np.concatenate(([0], step != 0)))
    else:
        uniq, first, inv = np.unique(gkey, return_index=True, return_inverse=True)
    g = len(uniq)

    def gsum(weights):
        return np.bincount(inv, weights=weights, minlength=g)

    if contiguous:
        longest = np.maximum.reduceat(np.where(high, run_len, 0.0), first) if g else np.zeros(0)
    else:
        longest = np.zeros(g)
        np.maximum.at(longest, inv[high], run_len[high])
    edges = np.array([upper for _, upper in FLOW_BANDS[:-1]])
    band = np.searchsorted(edges, fgf, side="left")  # the rule of model.freshgas.flow_band
    band_min = np.bincount(inv * len(FLOW_BANDS) + band, weights=dt,
                           minlength=g * len(FLOW_BANDS)).reshape(g, len(FLOW_BANDS))
    vfirst = vidx[first]
    theatre = _column(table, "theatre").take(vfirst).fill_null("unknown").to_pylist()
    month = _column(table, "month").take(vfirst)
    month = pc.strftime(pc.cast(month, "timestamp[s]"), "%Y-%m").fill_null("unknown").to_pylist()
    # The first valid sample of a group is its earliest (valid samples rise in time).
    start = pd.to_datetime(pd.Series(_column(table, "start_hint").take(vfirst).to_pandas())).to_numpy()
    raw = pd.DataFrame({
        "case_id": np.array(case_names.to_pylist(), dtype=object)[uniq // n_agents] if g else [],
        "agent": agent_names[uniq % n_agents] if g else [],
        "theatre": theatre,
        "month": month,
        "start": start,
        "samples": np.bincount(inv, minlength=g).astype(np.int64),
        "minutes": gsum(dt),
        "gaps": np.bincount(inv, weights=gap, minlength=g).astype(np.int64),
        "gap_min": gsum(np.where(gap, dt_raw, 0.0)),
        "end_tidal_basis_min": gsum(np.where(from_et, dt, 0.0)),
        "oxygen_l": gsum(o2 * dt),
        "air_l": gsum(air * dt),
        "nitrous_oxide_l": gsum(n2o * dt),
        "vapour_integral": gsum(fgf * dose * dt),
        "rebreathed_min": gsum(rebreathed_share(fgf, minute_ventilation_l_min) * dt),
        **{col: band_min[:, k] for k, col in enumerate(BAND_COLUMNS)},
        "longest_high_flow_min": longest,
    })
    return raw, counts, time_rows, gap_rows
