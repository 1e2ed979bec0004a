"""Per-case audit of case records: consumption, CO2e, cost, flow bands and long high flows.

The samples of each case are integrated with the foundation's formulas: each valid sample
holds until the next sample of its case (the left-hand step rule of
:func:`model.vapour.liquid_used_series_ml`), gaps longer than the limit are not counted.
The integration over samples runs in duckdb SQL; the per-case sums then go through
:func:`model.vapour.liquid_used_ml` (Dion's formula), :func:`model.emissions.gas_mass_g`,
:func:`model.emissions.emitted_mass_g`, :func:`model.emissions.co2e_kg` and
:func:`model.case.case_costs`, vectorised over the cases of each agent.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from .case import case_costs
from .emissions import co2e_kg, emitted_mass_g, gas_mass_g
from .errors import InputError
from .freshgas import FLOW_BANDS, FLOW_BAND_NAMES
from .records import (DEFAULT_GAP_LIMIT_MIN, ReadReport, Records, finish_report, read_records)
from .reference import DEFAULT_GWP, DEFAULT_REFERENCE, STANDARD_PRESSURE_KPA, Reference
from .vapour import liquid_used_ml

#: Fresh gas flow above which a sample counts as high flow. [L/min]
#: Source: Baker AB, Anaesth Intensive Care 1994;22:341-2 (high flow is above 2 L/min).
DEFAULT_HIGH_FLOW_L_MIN = FLOW_BANDS[3][1]
#: Longest run of high flow before a case is flagged. [min] Common practice, no source
#: (induction and emergence at high flow rarely last longer than this).
DEFAULT_HIGH_FLOW_LIMIT_MIN = 15.0

ENGINES = ("auto", "memory", "sql")

BAND_COLUMNS = tuple("band_" + n.replace(" ", "_") + "_min" for n in FLOW_BAND_NAMES)

#: Columns of the case table that add up over cases.
ADDITIVE = ("cases", "samples", "minutes", "gaps", "gap_min", "end_tidal_basis_min", "oxygen_l",
            "air_l", "nitrous_oxide_l", "liquid_agent_ml", "bottles", "agent_mass_g",
            "agent_emitted_g", "nitrous_oxide_g", "nitrous_oxide_emitted_g", "co2e_agent_kg",
            "co2e_nitrous_oxide_kg", "co2e_total_kg", "cost_agent", "cost_oxygen", "cost_air",
            "cost_nitrous_oxide", "cost_total", *BAND_COLUMNS, "high_flow_cases")


@dataclass
class AuditResult:
    """The audit of a set of records: one row per case, the reading report, and settings."""

    cases: pd.DataFrame
    report: ReadReport
    currency: str
    gwp_source: str
    gwp_label: str
    settings: dict = field(default_factory=dict)

    def by(self, key: str) -> pd.DataFrame:
        """Sums by ``theatre``, ``month`` or ``agent`` (see :func:`summarise`)."""
        return summarise(self.cases, key)

    @property
    def total(self) -> dict:
        """Sums over the whole set."""
        return summarise(self.cases, None).iloc[0].to_dict()

    def bands_by_theatre(self) -> pd.DataFrame:
        """Minutes in each flow band by theatre, long form (theatre, band, minutes, share)."""
        t = self.by("theatre")[["theatre", *BAND_COLUMNS]]
        long = t.melt(id_vars="theatre", value_vars=list(BAND_COLUMNS), var_name="band", value_name="minutes")
        long["band"] = long["band"].map(dict(zip(BAND_COLUMNS, FLOW_BAND_NAMES)))
        totals = long.groupby("theatre")["minutes"].transform("sum")
        long["share"] = np.where(totals > 0, long["minutes"] / totals.where(totals > 0, 1), 0.0)
        return long

    def use_by_month(self) -> pd.DataFrame:
        """Recorded use per month and item, for reconciling with purchases.

        Returns
        -------
        DataFrame
            ``month``, ``item`` (agent or gas name), ``recorded`` and ``unit`` (mL of liquid
            for volatile agents, L of gas at room conditions for gases).
        """
        c = self.cases
        rows = []
        vol = c[c["agent"] != "none"].groupby(["month", "agent"], as_index=False)["liquid_agent_ml"].sum()
        for r in vol.itertuples(index=False):
            rows.append((r.month, r.agent, float(r.liquid_agent_ml), "mL"))
        gases = c.groupby("month", as_index=False)[["nitrous_oxide_l", "oxygen_l", "air_l"]].sum()
        for r in gases.itertuples(index=False):
            rows.append((r.month, "nitrous_oxide", float(r.nitrous_oxide_l), "L"))
            rows.append((r.month, "oxygen", float(r.oxygen_l), "L"))
            rows.append((r.month, "air", float(r.air_l), "L"))
        return pd.DataFrame(rows, columns=["month", "item", "recorded", "unit"])

    def to_dict(self, max_cases: int = 1000) -> dict:
        """Machine-readable form with stable keys (units in the key names)."""
        def table(df):
            out = []
            for row in df.to_dict("records"):
                out.append({k: _clean(v) for k, v in row.items()})
            return out
        issues = self.report.issues.head(max(len(self.report.issues), 0))
        return {
            "currency": self.currency,
            "gwp_source": self.gwp_source,
            "gwp_source_label": self.gwp_label,
            "settings": dict(self.settings),
            "report": self.report.summary(),
            "messages": [m for m in issues["message"]],
            "gaps": [m for m in self.report.gap_list["message"]],
            "total": {k: _clean(v) for k, v in self.total.items()},
            "by_theatre": table(self.by("theatre")),
            "by_month": table(self.by("month")),
            "by_agent": table(self.by("agent")),
            "cases_shown": min(len(self.cases), max_cases),
            "cases": table(self.cases.head(max_cases)),
        }


def _clean(v):
    if v is pd.NaT or v is pd.NA:
        return None
    if isinstance(v, (np.floating, float)):
        v = float(v)
        return v if math.isfinite(v) else None
    if isinstance(v, np.integer):
        return int(v)
    if isinstance(v, np.bool_):
        return bool(v)
    if isinstance(v, pd.Timestamp):
        return v.isoformat()
    return v


def _case_sql(high_flow_l_min: float) -> str:
    bands = ", ".join(f"coalesce(sum(dt_min) FILTER (WHERE band = '{name}'), 0) AS {col}"
                      for name, col in zip(FLOW_BAND_NAMES, BAND_COLUMNS))
    hi = repr(float(high_flow_l_min))
    return f"""
    WITH r AS (
      SELECT *, fgf > {hi} AS high,
        coalesce(max(CASE WHEN NOT (fgf > {hi}) OR gap THEN t_min + coalesce(dt_raw, 0) END) OVER (
            PARTITION BY case_id ORDER BY _fileno, _row ROWS BETWEEN UNBOUNDED PRECEDING AND 1 PRECEDING),
          min(t_min) OVER (PARTITION BY case_id ORDER BY _fileno, _row
            ROWS BETWEEN UNBOUNDED PRECEDING AND CURRENT ROW)) AS run_start
      FROM valid
    )
    SELECT case_id, agent,
      coalesce(arg_min(theatre, t_min), 'unknown') AS theatre,
      coalesce(strftime(arg_min(month, t_min), '%Y-%m'), 'unknown') AS month,
      min(start_hint) AS start,
      count(*) AS samples,
      sum(dt_min) AS minutes,
      count_if(gap) AS gaps,
      coalesce(sum(dt_raw) FILTER (WHERE gap), 0) AS gap_min,
      sum(CASE WHEN from_end_tidal THEN dt_min ELSE 0 END) AS end_tidal_basis_min,
      sum(o2 * dt_min) AS oxygen_l,
      sum(air * dt_min) AS air_l,
      sum(n2o * dt_min) AS nitrous_oxide_l,
      sum(fgf * dose_pct * dt_min) AS vapour_integral,
      {bands},
      coalesce(max(CASE WHEN high THEN t_min + dt_min - run_start END), 0) AS longest_high_flow_min
    FROM r GROUP BY case_id, agent
    """


def audit_records(records, *, reference: Reference = DEFAULT_REFERENCE, gwp_source: str = DEFAULT_GWP,
                  temperature_c: float = 20.0, pressure_kpa: float = STANDARD_PRESSURE_KPA,
                  capture_efficiency: float = 0.0, high_flow_l_min: float = DEFAULT_HIGH_FLOW_L_MIN,
                  high_flow_limit_min: float = DEFAULT_HIGH_FLOW_LIMIT_MIN,
                  gap_limit_min: float = DEFAULT_GAP_LIMIT_MIN, memory_limit: str | None = None,
                  threads: int | None = None, max_messages: int | None = None,
                  engine: str = "auto", progress=None) -> AuditResult:
    """Audit case records: per-case consumption, CO2e, cost, flow-band minutes, high-flow flag.

    Parameters
    ----------
    records : Records or iterable of paths/globs
        Records already read with :func:`model.records.read_records`, or files to read.
    reference : Reference
        Reference data and prices.
    gwp_source : str
        Key of ``reference.gwp_sources``.
    temperature_c, pressure_kpa : float
        Room conditions for vapour and gas volumes. [°C], [kPa]
    capture_efficiency : float
        Share of scavenged agent captured before release. [1]
    high_flow_l_min : float
        Fresh gas flow above which a sample is high flow. [L/min]
    high_flow_limit_min : float
        A case whose longest unbroken high-flow run reaches this is flagged. [min]
    gap_limit_min : float
        Longest interval integrated (when reading files here). [min]
    engine : {"auto", "memory", "sql"}
        "memory" sorts the samples once and works in numpy (fast, needs the rows in
        memory); "sql" runs duckdb window functions out of core (bounded memory); "auto"
        picks "memory" up to ``IN_MEMORY_ROWS`` rows.

    Returns
    -------
    AuditResult
        ``cases`` has one row per case and agent: ``case_id``, ``agent``, ``theatre``,
        ``month`` (YYYY-MM of the first sample, or "unknown"), ``samples``, ``minutes``
        (counted), ``gaps``, ``gap_min`` (not counted), ``oxygen_l``, ``air_l``,
        ``nitrous_oxide_l`` [L], ``liquid_agent_ml`` [mL], ``bottles``, ``agent_mass_g``,
        ``agent_emitted_g``, ``nitrous_oxide_g`` [g], ``co2e_*_kg``, ``cost_*``, minutes in
        each flow band (``band_*_min``), ``longest_high_flow_min``, ``high_flow_flag``.

    Notes
    -----
    Dion's formula is linear in FGF x dial x time, so the per-sample sum
    ``S = sum(FGF_i * dial_i * dt_i)`` fed once to :func:`model.vapour.liquid_used_ml` equals
    the sum of the formula over the samples. Where a sample has no dial setting but an
    end-tidal agent concentration, the vapour leaving through the scavenger is estimated as
    FGF x end-tidal (steady-state mass balance, uptake neglected: a lower bound); the
    minutes on that basis are reported in ``end_tidal_basis_min``. Recorded flows are taken
    as delivered: the workstation's O2/N2O ratio limit is not applied again. Every
    delivered gram counts as emitted (no uptake model), less the capture efficiency.

    References
    ----------
    .. [1] Dion P. The cost of anaesthetic vapours. Can J Anaesth 1992;39:633-4.
    .. [2] Baker AB. Low flow and closed circuits. Anaesth Intensive Care 1994;22:341-2.
    """
    for name, value, low, high in (("high flow threshold", high_flow_l_min, 0.0, 30.0),
                                   ("high flow limit", high_flow_limit_min, 0.0, 24 * 60.0),
                                   ("capture efficiency", capture_efficiency, 0.0, 1.0),
                                   ("room temperature", temperature_c, 0.0, 45.0),
                                   ("pressure", pressure_kpa, 50.0, 120.0)):
        if not (isinstance(value, (int, float)) and math.isfinite(value) and low <= value <= high):
            raise InputError(name, value, f"allowed range is [{low:g}, {high:g}]")
    reference.gwp_source(gwp_source)
    step = progress or (lambda f, t: None)
    if not isinstance(records, Records):
        kwargs = {} if max_messages is None else {"max_messages": max_messages}
        records = read_records(records, reference=reference, gap_limit_min=gap_limit_min,
                               memory_limit=memory_limit, threads=threads, progress=progress, **kwargs)
        try:
            return _audit(records, reference, gwp_source, temperature_c, pressure_kpa, capture_efficiency,
                          high_flow_l_min, high_flow_limit_min, engine, step)
        finally:
            records.close()
    return _audit(records, reference, gwp_source, temperature_c, pressure_kpa, capture_efficiency,
                  high_flow_l_min, high_flow_limit_min, engine, step)


def _audit(records, reference, gwp_source, temperature_c, pressure_kpa, capture_efficiency,
           high_flow_l_min, high_flow_limit_min, engine, step) -> AuditResult:
    step(0.45, "Integrating the samples of each case")
    if engine not in ENGINES:
        raise InputError("engine", engine, "allowed engines are " + ", ".join(ENGINES))
    if engine == "auto":
        n_rows = records.con.sql("SELECT count(*) FROM raw").fetchall()[0][0]
        engine = "memory" if n_rows <= IN_MEMORY_ROWS else "sql"
    if engine == "memory":
        raw, counts, time_rows, gap_rows = _numpy_engine(records, high_flow_l_min)
    else:
        raw = records.con.sql(_case_sql(high_flow_l_min)).df()
        step(0.8, "Counting set-aside rows")
        # Row checks need no window: count them from ``prepared``. The time checks set aside
        # the rest of the rows that passed them; only when there are some is the window
        # over ``checked`` run again to tell duplicates from backward times.
        by_kind = dict(records.con.sql("SELECT coalesce(problem_a, ''), count(*) FROM prepared GROUP BY 1").fetchall())
        passed = by_kind.pop("", 0)
        counts = by_kind
        used = int(raw["samples"].sum()) if len(raw) else 0
        if passed > used:
            counts.update(records.con.sql(
                "SELECT problem, count(*) FROM checked WHERE problem IN ('duplicate_time', 'time_backwards') "
                "GROUP BY 1").fetchall())
        time_rows = gap_rows = None
    rows_valid = int(raw["samples"].sum()) if len(raw) else 0
    finish_report(records, counts, rows_valid, int(raw["gaps"].sum()) if len(raw) else 0,
                  float(raw["gap_min"].sum()) if len(raw) else 0.0, time_rows, gap_rows)
    step(0.9, "Costs and emissions")
    cases = case_results(raw, reference, gwp_source, temperature_c, pressure_kpa, capture_efficiency,
                         high_flow_limit_min)
    step(1.0, "Done")
    settings = {"gap_limit_min": records.gap_limit_min, "high_flow_l_min": float(high_flow_l_min),
                "high_flow_limit_min": float(high_flow_limit_min), "temperature_c": float(temperature_c),
                "pressure_kpa": float(pressure_kpa), "capture_efficiency": float(capture_efficiency)}
    return AuditResult(cases, records.report, reference.prices.currency, gwp_source,
                       reference.gwp_source(gwp_source).label, settings)


def case_results(raw: pd.DataFrame, reference: Reference, gwp_source: str, temperature_c: float,
                 pressure_kpa: float, capture_efficiency: float,
                 high_flow_limit_min: float = DEFAULT_HIGH_FLOW_LIMIT_MIN) -> pd.DataFrame:
    """Per-case consumption, emissions and cost from the integrated sums of each case.

    Parameters
    ----------
    raw : DataFrame
        One row per case with ``agent``, ``vapour_integral`` (sum of FGF x dose x dt,
        [L/min x % x min]), ``oxygen_l``, ``air_l``, ``nitrous_oxide_l`` [L] and the
        descriptive columns.

    Returns
    -------
    DataFrame
        ``raw`` with the derived columns (see :func:`audit_records`).
    """
    c = raw.copy()
    n = len(c)
    c.insert(2, "cases", np.ones(n, dtype=np.int64))
    n2o = reference.agents["nitrous_oxide"]
    prices = reference.prices
    for col in ("liquid_agent_ml", "bottles", "agent_mass_g", "agent_emitted_g", "co2e_agent_kg",
                "cost_agent"):
        c[col] = 0.0
    agents = c["agent"].to_numpy()
    for name in pd.unique(agents):
        if name == "none":
            continue
        mask = agents == name
        agent = reference.volatile(name)
        s = c.loc[mask, "vapour_integral"].to_numpy(dtype=float)
        liquid = liquid_used_ml(s, 1.0, 1.0, agent, temperature_c, pressure_kpa)
        grams = liquid * agent.liquid_density
        emitted = emitted_mass_g(grams, 0.0, agent.metabolised_fraction, capture_efficiency)
        c.loc[mask, "liquid_agent_ml"] = liquid
        c.loc[mask, "bottles"] = liquid / agent.bottle_volume
        c.loc[mask, "agent_mass_g"] = grams
        c.loc[mask, "agent_emitted_g"] = emitted
        c.loc[mask, "co2e_agent_kg"] = co2e_kg(emitted, reference.gwp(agent.name, gwp_source))
        c.loc[mask, "cost_agent"] = case_costs(liquid, 0.0, 0.0, 0.0, 0.0, agent, prices)["agent"]
    c["nitrous_oxide_g"] = gas_mass_g(c["nitrous_oxide_l"].to_numpy(dtype=float), n2o.molar_mass,
                                      temperature_c, pressure_kpa)
    c["nitrous_oxide_emitted_g"] = emitted_mass_g(c["nitrous_oxide_g"].to_numpy(), 0.0,
                                                  n2o.metabolised_fraction, 0.0)
    c["co2e_nitrous_oxide_kg"] = co2e_kg(c["nitrous_oxide_emitted_g"].to_numpy(),
                                         reference.gwp("nitrous_oxide", gwp_source,
                                                       used=bool((c["nitrous_oxide_l"] > 0).any())))
    c["co2e_total_kg"] = c["co2e_agent_kg"] + c["co2e_nitrous_oxide_kg"]
    any_volatile = reference.volatile("sevoflurane")  # bottle size unused: no liquid passed
    gas = case_costs(np.zeros(n), c["oxygen_l"].to_numpy(dtype=float), c["air_l"].to_numpy(dtype=float),
                     c["nitrous_oxide_l"].to_numpy(dtype=float), np.zeros(n), any_volatile, prices)
    c["cost_oxygen"] = gas["oxygen"]
    c["cost_air"] = gas["air"]
    c["cost_nitrous_oxide"] = gas["nitrous_oxide"]
    c["cost_total"] = c["cost_agent"] + c["cost_oxygen"] + c["cost_air"] + c["cost_nitrous_oxide"]
    c["high_flow_flag"] = c["longest_high_flow_min"] >= high_flow_limit_min
    c["high_flow_cases"] = c["high_flow_flag"].astype(np.int64)
    with np.errstate(invalid="ignore", divide="ignore"):
        c["mean_fgf_l_min"] = np.where(c["minutes"] > 0, (c["oxygen_l"] + c["air_l"] + c["nitrous_oxide_l"])
                                       / c["minutes"].where(c["minutes"] > 0, 1), np.nan)
    c = c.drop(columns=["vapour_integral"]).sort_values(["month", "theatre", "case_id", "agent"],
                                                         kind="stable").reset_index(drop=True)
    return c


def summarise(cases: pd.DataFrame, by: str | None) -> pd.DataFrame:
    """Sums of the additive case columns, by ``theatre``, ``month``, ``agent`` or overall.

    Parameters
    ----------
    cases : DataFrame
        The case table of an :class:`AuditResult`.
    by : {"theatre", "month", "agent"} or None
        Grouping; None gives one row for the whole set.

    Returns
    -------
    DataFrame
        One row per group: the additive columns (``ADDITIVE``), plus the means
        ``liquid_agent_ml_per_case``, ``co2e_kg_per_case`` and ``mean_fgf_l_min``.
    """
    if by not in (None, "theatre", "month", "agent"):
        raise ValueError(f"by must be one of ('theatre', 'month', 'agent', None), got {by!r}")
    cols = [c for c in ADDITIVE if c in cases.columns]
    if by is None:
        out = cases[cols].sum().to_frame().T
        out.insert(0, "group", "all records")
    else:
        out = cases.groupby(by, as_index=False, sort=True)[cols].sum()
    with np.errstate(invalid="ignore", divide="ignore"):
        n = out["cases"].where(out["cases"] > 0)
        out["liquid_agent_ml_per_case"] = out["liquid_agent_ml"] / n
        out["co2e_kg_per_case"] = out["co2e_total_kg"] / n
        m = out["minutes"].where(out["minutes"] > 0)
        out["mean_fgf_l_min"] = (out["oxygen_l"] + out["air_l"] + out["nitrous_oxide_l"]) / m
    for c in ("cases", "samples", "gaps", "high_flow_cases"):
        out[c] = out[c].astype(np.int64)
    return out.reset_index(drop=True)


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


def _numpy_engine(recs: Records, high_flow_l_min: float):
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
        **{col: band_min[:, k] for k, col in enumerate(BAND_COLUMNS)},
        "longest_high_flow_min": longest,
    })
    return raw, counts, time_rows, gap_rows
