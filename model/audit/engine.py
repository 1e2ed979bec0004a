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

from model.audit.cases import case_results
from model.audit.memory import IN_MEMORY_ROWS, _numpy_engine
from model.audit.result import AuditResult, BAND_COLUMNS, DEFAULT_HIGH_FLOW_LIMIT_MIN, DEFAULT_HIGH_FLOW_L_MIN, ENGINES
from model.errors import InputError
from model.freshgas import FLOW_BAND_NAMES
from model.io.record_files import DEFAULT_GAP_LIMIT_MIN
from model.io.record_report import Records, finish_report
from model.io.records import read_records
from model.reference import DEFAULT_GWP, DEFAULT_REFERENCE, Reference, STANDARD_PRESSURE_KPA


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
        Records already read with :func:`model.io.records.read_records`, or files to read.
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
            with records.guard():
                return _audit(records, reference, gwp_source, temperature_c, pressure_kpa, capture_efficiency,
                              high_flow_l_min, high_flow_limit_min, engine, step)
        finally:
            records.close()
    with records.guard():
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
