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
import threading
from concurrent.futures import ThreadPoolExecutor

import pandas as pd

from model.audit.absorbent import absorbent_assumptions
from model.audit.cases import case_results
from model.audit.identity import keep_cases_apart
from model.audit.memory import IN_MEMORY_ROWS, _numpy_engine, read_parquet_file
from model.audit.result import BAND_COLUMNS, DEFAULT_HIGH_FLOW_L_MIN, DEFAULT_HIGH_FLOW_LIMIT_MIN, ENGINES, AuditResult
from model.base.errors import InputError
from model.freshgas import FLOW_BAND_NAMES
from model.io.record_files import DEFAULT_GAP_LIMIT_MIN
from model.io.record_reading import Records, finish_report
from model.io.records import read_records
from model.reference import DEFAULT_GWP, DEFAULT_REFERENCE, STANDARD_PRESSURE_KPA, Reference


def _case_sql(high_flow_l_min: float, minute_ventilation_l_min: float) -> str:
    bands = ", ".join(
        f"coalesce(sum(dt_min) FILTER (WHERE band = '{name}'), 0) AS {col}"
        for name, col in zip(FLOW_BAND_NAMES, BAND_COLUMNS, strict=True)
    )
    hi = repr(float(high_flow_l_min))
    ve = repr(float(minute_ventilation_l_min))
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
      sum(greatest(least(1 - fgf / {ve}, 1), 0) * dt_min) AS rebreathed_min,
      {bands},
      coalesce(max(CASE WHEN high THEN t_min + dt_min - run_start END), 0) AS longest_high_flow_min
    FROM r GROUP BY case_id, agent
    """


def audit_records(
    records,
    *,
    reference: Reference = DEFAULT_REFERENCE,
    gwp_source: str = DEFAULT_GWP,
    temperature_c: float = 20.0,
    pressure_kpa: float = STANDARD_PRESSURE_KPA,
    capture_efficiency: float = 0.0,
    high_flow_l_min: float = DEFAULT_HIGH_FLOW_L_MIN,
    high_flow_limit_min: float = DEFAULT_HIGH_FLOW_LIMIT_MIN,
    gap_limit_min: float = DEFAULT_GAP_LIMIT_MIN,
    memory_limit: str | None = None,
    threads: int | None = None,
    max_messages: int | None = None,
    engine: str = "auto",
    progress=None,
    time_zone: str | None = None,
) -> AuditResult:
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
    time_zone : str, optional
        IANA time zone of times written without a UTC offset (when reading files here);
        see :func:`model.io.records.read_records`.

    Returns
    -------
    AuditResult
        ``cases`` has one row per case and agent: ``case_id``, ``agent``, ``theatre``,
        ``month`` (YYYY-MM of the first sample, or "unknown"), ``samples``, ``minutes``
        (counted), ``gaps``, ``gap_min`` (not counted), ``oxygen_l``, ``air_l``,
        ``nitrous_oxide_l`` [L], ``liquid_agent_ml`` [mL], ``bottles``, ``agent_mass_g``,
        ``agent_emitted_g``, ``nitrous_oxide_g`` [g], ``co2e_*_kg``, ``cost_*``, minutes in
        each flow band (``band_*_min``), ``time_weighted_fgf_l_min`` (sum FGF x dt over the
        counted minutes) [L/min], ``longest_high_flow_min``, ``high_flow_flag``, and the
        absorbent estimate ``co2_absorbed_l`` [L], ``absorbent_g`` [g], ``cost_absorbent``.

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

    CO2 absorbent is an estimate (records carry no patient): each sample sends
    ``VCO2 x rebreathed_share(FGF, VE)`` into the absorber, the case plans' formula
    (:func:`model.circle.rebreathed_share`), with VCO2, minute ventilation and absorbent
    capacity from :func:`model.audit.absorbent.absorbent_assumptions` (the case plans'
    default adult unless the settings file's ``[absorbent]`` table gives them).

    References
    ----------
    .. [1] Dion P. The cost of anaesthetic vapours. Can J Anaesth 1992;39:633-4.
    .. [2] Baker AB. Low flow and closed circuits. Anaesth Intensive Care 1994;22:341-2.
    """
    for name, value, low, high in (
        ("high flow threshold", high_flow_l_min, 0.0, 30.0),
        ("high flow limit", high_flow_limit_min, 0.0, 24 * 60.0),
        ("capture efficiency", capture_efficiency, 0.0, 1.0),
        ("room temperature", temperature_c, 0.0, 45.0),
        ("pressure", pressure_kpa, 50.0, 120.0),
    ):
        if isinstance(value, bool) or not (
            isinstance(value, (int, float)) and math.isfinite(value) and low <= value <= high
        ):
            raise InputError(name, value, f"allowed range is [{low:g}, {high:g}]")
    reference.gwp_source(gwp_source)
    step = progress or (lambda f, t: None)
    if not isinstance(records, Records):
        kwargs = {} if max_messages is None else {"max_messages": max_messages}
        records = read_records(
            records,
            reference=reference,
            gap_limit_min=gap_limit_min,
            memory_limit=memory_limit,
            threads=threads,
            progress=progress,
            time_zone=time_zone,
            **kwargs,
        )
        try:
            with records.guard():
                return _audit(
                    records,
                    reference,
                    gwp_source,
                    temperature_c,
                    pressure_kpa,
                    capture_efficiency,
                    high_flow_l_min,
                    high_flow_limit_min,
                    engine,
                    step,
                )
        finally:
            records.close()
    with records.guard():
        return _audit(
            records,
            reference,
            gwp_source,
            temperature_c,
            pressure_kpa,
            capture_efficiency,
            high_flow_l_min,
            high_flow_limit_min,
            engine,
            step,
        )


def _watched(con, work, step, low: float, high: float, total_rows: int):
    """Run ``work`` (duckdb queries on ``con``) in a worker thread, reporting its progress.

    ``step`` is told the share of the current query that duckdb reports done, as rows out
    of ``total_rows``.

    The caller's thread only watches, so a progress callback that must run there (a page's
    progress bar) can. Exceptions of ``work`` are raised here.
    """
    out: dict = {}

    def run():
        try:
            out["value"] = work()
        except BaseException as exc:  # handed to the caller's thread below
            out["error"] = exc

    worker = threading.Thread(target=run, name="gas-ledger-audit", daemon=True)
    worker.start()
    last = low
    while True:
        worker.join(0.5)
        if not worker.is_alive():
            break
        done = con.query_progress()
        fraction = low + (high - low) * done / 100.0 if done >= 0 else last
        if fraction > last:
            last = fraction
            rows = int(total_rows * (fraction - low) / (high - low))
            step(fraction, f"About {rows:,} of {total_rows:,} rows done")
    if "error" in out:
        raise out["error"]
    return out["value"]


def _read_file(records: Records, i: int):
    """A Parquet file's columns read with pyarrow (see ``read_parquet_file``); (None, None) for CSV."""
    return read_parquet_file(records, i) if records.files[i].format == "parquet" else (None, None)


def _ids_shared_in_a_group(records: Records) -> bool:
    """Whether CSV files read as one table share a case id (their unit would merge it unchecked)."""
    for idx, sql in records.csv_groups:
        if (
            len(idx) > 1
            and records.con.sql(
                f"SELECT case_id FROM ({sql}) WHERE problem_a IS NULL AND case_id IS NOT NULL "
                "GROUP BY case_id HAVING count(DISTINCT _fileno) > 1 LIMIT 1"
            ).fetchall()
        ):
            return True
    return False


def _no_file():
    """Nothing read ahead: the next unit is a group of CSV files, read by its query."""
    return None, None


def _units(records: Records) -> list[tuple[list[int], str]]:
    """What the file-by-file engine takes at a time: (file indices, their ``prepared`` query).

    One file at a time, except CSV files of one layout, which were read as one table: they
    are taken together while they fit in memory (many small daily exports cost one query,
    not one each). A case with samples in several of them is integrated across them, as
    the in-memory engine does.
    """
    grouped = {
        idx[0]: (idx, sql)
        for idx, sql in records.csv_groups
        if len(idx) > 1 and sum(records.file_rows[i] for i in idx) <= IN_MEMORY_ROWS
    }
    skip = {i for idx, _ in grouped.values() for i in idx}
    units = []
    for i, sql in enumerate(records.file_sql):
        if i in grouped:
            units.append(grouped[i])
        elif i not in skip:
            units.append(([i], sql))
    return units


def _files_engine(records: Records, high_flow_l_min: float, minute_ventilation_l_min: float, step):
    """The in-memory engine run on each file in turn, when no case spans two files.

    Returns
    -------
    tuple or None
        As :func:`model.audit.memory._numpy_engine` for the whole set, or None when a case
        has samples in more than one file (its time checks and integration then need the
        files together).
    """
    total = max(sum(records.file_rows), 1)
    n_files = len(records.file_sql)
    units = _units(records)
    parts, time_rows, gap_rows = [], [], []
    counts: dict = {}
    done = 0
    # Each file's rows come in file order, so the engine finds them grouped by case and skips its sort.
    records.con.execute("SET preserve_insertion_order = true")
    try:
        # While one file is integrated, the next is read (pyarrow and numpy release the
        # GIL, so the two use both cores); at most two files are in memory at once.
        with ThreadPoolExecutor(max_workers=1, thread_name_prefix="gas-ledger-read") as reader:
            ahead = reader.submit(_read_file, records, units[0][0][0])
            for u, (idx, sql) in enumerate(units):
                first = idx[0] + 1
                step(0.45 + 0.45 * done / total, f"File {first} of {n_files}: {done:,} of {total:,} rows done")
                table, texts = ahead.result()
                if u + 1 < len(units):
                    nxt = units[u + 1][0]
                    ahead = reader.submit(_read_file, records, nxt[0]) if len(nxt) == 1 else reader.submit(_no_file)
                raw, c, t, g = _numpy_engine(
                    records, high_flow_l_min, minute_ventilation_l_min, sql if table is None else table, texts
                )
                del table, texts
                raw["_file"] = u
                parts.append(raw)
                for k, v in c.items():
                    counts[k] = counts.get(k, 0) + int(v)
                time_rows += t
                gap_rows += g
                done += sum(records.file_rows[i] for i in idx)
    finally:
        records.con.execute("SET preserve_insertion_order = false")
    step(0.9, f"{n_files} of {n_files} file(s): {done:,} of {total:,} rows done")
    raw = pd.concat(parts, ignore_index=True) if len(parts) > 1 else parts[0]
    if len(parts) > 1:
        # A case in two files would need the files together: check none is.
        per_file = raw[["case_id", "_file"]].drop_duplicates()
        if per_file["case_id"].duplicated().any():
            return None
    limit = records._max_messages
    return raw.drop(columns="_file"), counts, time_rows[:limit], gap_rows[:limit]


def _audit(
    records,
    reference,
    gwp_source,
    temperature_c,
    pressure_kpa,
    capture_efficiency,
    high_flow_l_min,
    high_flow_limit_min,
    engine,
    step,
) -> AuditResult:
    step(0.45, "Integrating the samples of each case")
    if engine not in ENGINES:
        raise InputError("engine", engine, "allowed engines are " + ", ".join(ENGINES))
    n_rows = sum(records.file_rows)
    if engine == "auto":
        # File by file while each file fits in memory; one pass over every file otherwise.
        engine = "files" if max(records.file_rows, default=0) <= IN_MEMORY_ROWS else "sql"
    absorbent = absorbent_assumptions(reference)
    ve = absorbent.minute_ventilation_l_min
    result = None
    if engine == "files":
        result = None if _ids_shared_in_a_group(records) else _files_engine(records, high_flow_l_min, ve, step)
        if result is None:  # a case id in two files: the whole set at once
            keep_cases_apart(records)
            engine = "memory" if n_rows <= IN_MEMORY_ROWS else "sql"
            step(0.45, f"A case id is in more than one file: auditing all {n_rows:,} rows at once")
    else:
        keep_cases_apart(records)
    if result is not None:
        raw, counts, time_rows, gap_rows = result
    elif engine == "memory":
        raw, counts, time_rows, gap_rows = _watched(
            records.con, lambda: _numpy_engine(records, high_flow_l_min, ve), step, 0.45, 0.9, n_rows
        )
    else:
        raw = _watched(
            records.con, lambda: records.con.sql(_case_sql(high_flow_l_min, ve)).df(), step, 0.45, 0.8, n_rows
        )
        step(0.8, "Counting set-aside rows")
        # Row checks need no window: count them from ``prepared``. The time checks set aside
        # the rest of the rows that passed them; only when there are some is the window
        # over ``checked`` run again to tell duplicates from backward times.
        by_kind = dict(records.con.sql("SELECT coalesce(problem_a, ''), count(*) FROM prepared GROUP BY 1").fetchall())
        passed = by_kind.pop("", 0)
        counts = by_kind
        used = int(raw["samples"].sum()) if len(raw) else 0
        if passed > used:
            counts.update(
                records.con.sql(
                    "SELECT problem, count(*) FROM checked WHERE problem IN ('duplicate_time', 'time_backwards') "
                    "GROUP BY 1"
                ).fetchall()
            )
        time_rows = gap_rows = None
    rows_valid = int(raw["samples"].sum()) if len(raw) else 0
    finish_report(
        records,
        counts,
        rows_valid,
        int(raw["gaps"].sum()) if len(raw) else 0,
        float(raw["gap_min"].sum()) if len(raw) else 0.0,
        time_rows,
        gap_rows,
    )
    step(0.9, "Costs and emissions")
    cases = case_results(
        raw, reference, gwp_source, temperature_c, pressure_kpa, capture_efficiency, high_flow_limit_min, absorbent
    )
    step(1.0, f"Done: {n_rows:,} of {n_rows:,} rows in {len(records.files)} file(s)")
    settings = {
        "gap_limit_min": records.gap_limit_min,
        "time_zone": records.time_zone,
        "high_flow_l_min": float(high_flow_l_min),
        "high_flow_limit_min": float(high_flow_limit_min),
        "temperature_c": float(temperature_c),
        "pressure_kpa": float(pressure_kpa),
        "capture_efficiency": float(capture_efficiency),
        "absorbent_estimate": absorbent.as_dict(),
    }
    return AuditResult(
        cases, records.report, reference.prices.currency, gwp_source, reference.gwp_source(gwp_source).label, settings
    )
