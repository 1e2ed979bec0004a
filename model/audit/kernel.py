"""One compiled pass over a file's samples: time order, intervals, flow bands, high-flow runs, per-case sums.

The in-memory engine (:mod:`model.audit.memory`) works each step as a numpy operation over
every sample, some thirty passes over the columns. When the samples come as most record
systems write them, grouped by case in time order with every row valid, this module does
the same arithmetic in one loop compiled by numba, in the same order and with the same
operations, so every sum is the same to the last bit; any other input is left to numpy.
"""

from __future__ import annotations

import numpy as np

__all__ = ["case_sums", "load_kernels", "rows_pass"]

#: Columns of the ``sums`` array of :func:`case_sums`, in order (``band_min`` follows).
SUM_COLUMNS = (
    "minutes",
    "gap_min",
    "end_tidal_basis_min",
    "oxygen_l",
    "air_l",
    "nitrous_oxide_l",
    "vapour_integral",
    "rebreathed_min",
    "longest_high_flow_min",
)

_compiled: dict = {}


def _kernel(name: str = "scan"):
    """A compiled loop, built on first use (numba caches the machine code on disk).

    None without numba (the optional ``fast`` extra): the callers then take the numpy path,
    which gives the same results to the last bit.
    """
    if name not in _compiled:
        try:
            from numba import njit
        except ImportError:
            return None

        _compiled[name] = njit(cache=True, nogil=True)({"scan": _scan, "groups": _group_count, "checks": _checks}[name])
    return _compiled[name]


def _checks(
    case_code, n_cases, agent_code, known, volatile, max_dial, o2, air, n2o, dial, et, nan_missing, max_flow, max_total
):
    """The loop behind :func:`rows_pass` (plain Python; numba compiles it)."""
    n = len(case_code)
    nf = 3
    for i in range(n):
        a = agent_code[i]
        if case_code[i] >= n_cases or not known[a]:
            return False
        present = False
        total = 0.0
        for f in range(nf):
            flow = o2 if f == 0 else (air if f == 1 else n2o)
            if len(flow) == 0:  # no such column
                continue
            x = flow[i]
            if np.isnan(x) and nan_missing[f]:
                continue
            if not np.isfinite(x) or x < 0.0 or x > max_flow:
                return False
            present = True
            total += x
        if not present or total > max_total:
            return False
        d = dial[i] if len(dial) else np.nan
        e = et[i] if len(et) else np.nan
        if (len(dial) and np.isnan(d) and not nan_missing[nf]) or (len(et) and np.isnan(e) and not nan_missing[nf + 1]):
            return False
        if np.isinf(d) or np.isinf(e):
            return False
        if volatile[a] and np.isnan(d) and np.isnan(e):
            return False
        md = max_dial[a]
        if d < 0.0 or d > md or e < 0.0 or e > md:
            return False
    return True


def _checks_numpy(
    case_code, n_cases, agent_code, known, volatile, max_dial, o2, air, n2o, dial, et, nan_missing, max_flow, max_total
):
    """:func:`_checks` as numpy operations over every row, for when numba is absent.

    The same tests as the loop, each over the whole column; a row fails the file when any
    test fails, so the order of the tests does not change the answer.
    """
    n = len(case_code)
    if n == 0:
        return True
    if (case_code >= n_cases).any() or not known[agent_code].all():
        return False
    present = np.zeros(n, dtype=np.bool_)
    total = np.zeros(n)
    for f, flow in enumerate((o2, air, n2o)):
        if len(flow) == 0:  # no such column
            continue
        counted = ~(np.isnan(flow) & nan_missing[f])
        with np.errstate(invalid="ignore"):
            bad = ~np.isfinite(flow) | (flow < 0.0) | (flow > max_flow)
        if (counted & bad).any():
            return False
        present |= counted
        total = total + np.where(counted, flow, 0.0)
    if not present.all() or (total > max_total).any():
        return False
    d = dial if len(dial) else np.full(n, np.nan)
    e = et if len(et) else np.full(n, np.nan)
    if (len(dial) and not nan_missing[3] and np.isnan(d).any()) or (
        len(et) and not nan_missing[4] and np.isnan(e).any()
    ):
        return False
    if np.isinf(d).any() or np.isinf(e).any():
        return False
    if (volatile[agent_code] & np.isnan(d) & np.isnan(e)).any():
        return False
    md = max_dial[agent_code]
    with np.errstate(invalid="ignore"):
        return not ((d < 0.0) | (d > md) | (e < 0.0) | (e > md)).any()


def rows_pass(
    case_code,
    n_cases: int,
    agent_code,
    known,
    volatile,
    max_dial,
    flows,
    dial,
    end_tidal,
    nan_missing,
    *,
    max_flow_l_min: float,
    max_total_flow_l_min: float,
) -> bool:
    """Whether every row passes the fast row checks of a Parquet file, in one compiled pass.

    Parameters
    ----------
    case_code : ndarray of int64
        Code of each row's case id; ``n_cases`` or more means missing. [1]
    agent_code : ndarray of int64
        Code of each row's agent text, into ``known``, ``volatile`` and ``max_dial``
        (whether the text names an agent, a volatile one, and its highest dial [% v/v]).
    flows : tuple of three ndarray of float64
        O2, air and N2O flows, each empty when the file has no such column. [L/min]
    dial, end_tidal : ndarray of float64
        Dial and end-tidal concentration, or empty when the file has no such column. [% v/v]
    nan_missing : ndarray of bool
        For O2, air, N2O, dial and end-tidal: whether NaN there is a missing value
        (the column has nulls, and its values were checked finite where present) rather
        than text that is not a number.
    max_flow_l_min, max_total_flow_l_min : float
        Highest single flow and highest total flow accepted. [L/min]

    Returns
    -------
    bool
        True when every row passes; these checks only ever refuse more than the SQL row
        checks (``model.io.records``), which then run and say which row fails and why.
    """
    empty = np.zeros(0)
    o2, air, n2o = (empty if x is None else np.ascontiguousarray(x, dtype=np.float64) for x in flows)
    return bool(
        (_kernel("checks") or _checks_numpy)(
            np.ascontiguousarray(case_code, dtype=np.int64),
            np.int64(n_cases),
            np.ascontiguousarray(agent_code, dtype=np.int64),
            np.asarray(known, dtype=np.bool_),
            np.asarray(volatile, dtype=np.bool_),
            np.asarray(max_dial, dtype=np.float64),
            o2,
            air,
            n2o,
            empty if dial is None else np.ascontiguousarray(dial, dtype=np.float64),
            empty if end_tidal is None else np.ascontiguousarray(end_tidal, dtype=np.float64),
            np.asarray(nan_missing, dtype=np.bool_),
            float(max_flow_l_min),
            float(max_total_flow_l_min),
        )
    )


def _group_count(code, agent, t, n_agents):
    """The groups (case x agent) of samples in the order :func:`_scan` needs; -1 when out of it.

    The order: cases in rising code, within a case agents in rising code and times rising
    strictly (plain Python; numba compiles it).
    """
    n = len(code)
    groups = 0
    for i in range(n):
        if i == 0:
            groups = 1
            continue
        if code[i] < code[i - 1]:
            return -1
        key0 = code[i - 1] * n_agents + agent[i - 1]
        key1 = code[i] * n_agents + agent[i]
        if key1 < key0 or (code[i] == code[i - 1] and not t[i] > t[i - 1]):
            return -1
        if key1 != key0:
            groups += 1
    return groups


def _scan(code, agent, t, o2, air, n2o, dial, et, n_agents, none_code, gap_limit, high_flow, ve, edges, groups):
    """The loop behind :func:`case_sums` over ``groups`` groups in order (plain Python; numba compiles it)."""
    n = len(code)
    nb = len(edges) + 1
    first = np.empty(groups, np.int64)
    samples = np.zeros(groups, np.int64)
    gaps = np.zeros(groups, np.int64)
    sums = np.zeros((groups, 9))
    band_min = np.zeros((groups, nb))
    gap = np.zeros(n, np.bool_)
    ne = len(edges)
    # Sums of the current group, kept in locals and written when the group ends; each is
    # summed from 0.0 row by row, as numpy.bincount sums.
    bands = np.zeros(nb)
    g = -1
    count = n_gaps = 0
    s_dt = s_gap = s_et = s_o2 = s_air = s_n2o = s_vap = s_reb = longest = 0.0
    cs = 0.0  # running sum of high-flow time over every row (as numpy's cumsum)
    run_base = 0.0
    prev_end = True  # the row before ends a run (or there is none)
    prev_key = -1
    for i in range(n):
        key = code[i] * n_agents + agent[i]
        if i == 0 or key != prev_key:
            if g >= 0:
                samples[g], gaps[g] = count, n_gaps
                sums[g, 0], sums[g, 1], sums[g, 2], sums[g, 3], sums[g, 4] = s_dt, s_gap, s_et, s_o2, s_air
                sums[g, 5], sums[g, 6], sums[g, 7], sums[g, 8] = s_n2o, s_vap, s_reb, longest
                band_min[g, :] = bands
            g += 1
            first[g] = i
            count = n_gaps = 0
            s_dt = s_gap = s_et = s_o2 = s_air = s_n2o = s_vap = s_reb = 0.0
            bands[:] = 0.0
        prev_key = key
        same_next = i + 1 < n and code[i + 1] == code[i]
        dt_raw = t[i + 1] - t[i] if same_next else np.nan
        dt0 = 0.0 if np.isnan(dt_raw) else dt_raw
        is_gap = dt0 > gap_limit
        dt = 0.0 if is_gap else dt0
        gap[i] = is_gap
        x_o2 = 0.0 if np.isnan(o2[i]) else o2[i]
        x_air = 0.0 if np.isnan(air[i]) else air[i]
        x_n2o = 0.0 if np.isnan(n2o[i]) else n2o[i]
        fgf = x_o2 + x_air + x_n2o
        from_et = np.isnan(dial[i])
        if from_et:
            dose = 0.0 if np.isnan(et[i]) else et[i]
        else:
            dose = dial[i]
        if agent[i] == none_code:
            dose = 0.0
            from_et = False
        high = fgf > high_flow
        w = dt if high else 0.0
        cs += w
        if i == 0 or prev_end:
            run_base = cs - w  # as numpy: the running sum at the run's first row, less its time
        run_len = cs - run_base
        # A run starts after a row that is not high, ends before a gap, or is the case's last.
        prev_end = (not same_next) or (not high) or is_gap
        lng = run_len if high else 0.0
        if count == 0 or lng > longest:
            longest = lng
        b = 0
        while b < ne and edges[b] < fgf:
            b += 1
        reb = 1.0 - fgf / ve
        if reb < 0.0:
            reb = 0.0
        elif reb > 1.0:
            reb = 1.0
        count += 1
        if is_gap:
            n_gaps += 1
        s_dt += dt
        s_gap += dt_raw if is_gap else 0.0
        s_et += dt if from_et else 0.0
        s_o2 += x_o2 * dt
        s_air += x_air * dt
        s_n2o += x_n2o * dt
        s_vap += fgf * dose * dt
        s_reb += reb * dt
        bands[b] += dt
    if g >= 0:
        samples[g], gaps[g] = count, n_gaps
        sums[g, 0], sums[g, 1], sums[g, 2], sums[g, 3], sums[g, 4] = s_dt, s_gap, s_et, s_o2, s_air
        sums[g, 5], sums[g, 6], sums[g, 7], sums[g, 8] = s_n2o, s_vap, s_reb, longest
        band_min[g, :] = bands
    return first, samples, gaps, sums, band_min, gap


def case_sums(
    code,
    agent,
    t_min,
    o2,
    air,
    n2o,
    dial,
    end_tidal,
    *,
    n_agents: int,
    none_code: int,
    gap_limit_min: float,
    high_flow_l_min: float,
    minute_ventilation_l_min: float,
    band_edges_l_min,
):
    """Per case and agent sums of valid samples, in one compiled pass; None when it does not apply.

    Parameters
    ----------
    code, agent : ndarray of int64
        Case code and agent code of each sample, in file order. [1]
    t_min : ndarray of float64
        Time of each sample. [min]
    o2, air, n2o : ndarray of float64
        Flows (NaN counts as none). [L/min]
    dial, end_tidal : ndarray of float64
        Dial and end-tidal concentration (the dial, else the end-tidal, is the dose; none
        when the agent is ``none_code``). [% v/v]
    n_agents, none_code : int
        Number of agent codes; the code of "no agent" (-1 when there is none).
    gap_limit_min : float
        An interval longer than this is a gap and counts no time. [min]
    high_flow_l_min : float
        Flows above this make a high-flow run. [L/min]
    minute_ventilation_l_min : float
        Minute ventilation of the rebreathed share. [L/min]
    band_edges_l_min : ndarray of float64
        Upper edges of the flow bands but the last (a flow at an edge is in the lower band,
        as ``model.freshgas.flow_band``). [L/min]

    Returns
    -------
    tuple or None
        ``(first, samples, gaps, sums, band_min, gap)``: each group's first row; its sample
        and gap counts; its sums in the order of ``SUM_COLUMNS`` (integrals of time
        [min], gas [L] and vapour [L/min x % x min], the longest high-flow run [min]);
        minutes in each flow band; whether each row's interval is a gap. None when the
        samples are not grouped by case and agent in rising time (numpy's general path
        then sorts them and sets aside duplicate and backward times).

    Notes
    -----
    Each quantity is formed as in :func:`model.audit.memory._numpy_engine` (interval to
    the next sample of the same case, gaps count no time, the rebreathed share
    ``clip(1 - FGF / VE, 0, 1)`` of :func:`model.circle.rebreathed_share`, a high-flow run's
    length as a difference of the running sum of high-flow time) and summed row by row in
    file order, as ``numpy.bincount`` sums, so both paths give the same bits; the tests
    check it on random records.
    """
    if _kernel("scan") is None:  # no numba: numpy's general path does the same sums
        return None
    arrays = [np.ascontiguousarray(a, dtype=np.int64) for a in (code, agent)] + [
        np.ascontiguousarray(a, dtype=np.float64) for a in (t_min, o2, air, n2o, dial, end_tidal)
    ]
    groups = _kernel("groups")(arrays[0], arrays[1], arrays[2], np.int64(n_agents))
    if groups < 0:
        return None
    return _kernel("scan")(
        *arrays,
        np.int64(n_agents),
        np.int64(none_code),
        float(gap_limit_min),
        float(high_flow_l_min),
        float(minute_ventilation_l_min),
        np.ascontiguousarray(band_edges_l_min, dtype=np.float64),
        np.int64(groups),
    )


def load_kernels() -> bool:
    """Load (or compile, on a new install) the machine code of every compiled loop now.

    Runs each loop once on two samples of one case, with the argument types the audit
    passes (float columns read-only, as Arrow hands them over, and writable), so the first
    audit after a server start does not wait for numba to load its cached code (about 1 s
    of CPU on a 2-core machine). Changes no result. Returns False without numba.
    """
    if _kernel("scan") is None:
        return False
    code, agent = np.zeros(2, dtype=np.int64), np.zeros(2, dtype=np.int64)
    for writable in (False, True):

        def col(*values, writable=writable):
            a = np.array(values, dtype=np.float64)
            a.setflags(write=writable)
            return a

        t, flow, dose = col(0.0, 1.0), col(1.0, 1.0), col(2.0, 2.0)
        rows_pass(
            code, 1, agent, [True], [True], [8.0], (flow, flow, flow), dose, dose, [False] * 5,
            max_flow_l_min=20.0, max_total_flow_l_min=30.0,
        )  # fmt: skip
        case_sums(
            code, agent, t, flow, flow, flow, dose, dose, n_agents=1, none_code=-1, gap_limit_min=5.0,
            high_flow_l_min=2.0, minute_ventilation_l_min=5.0, band_edges_l_min=np.array([0.5, 1.0]),
        )  # fmt: skip
    return True
