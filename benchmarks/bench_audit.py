"""Benchmark: auditing case records, a hospital's year (2 million rows) and a health system's
(200 million rows across Parquet files, out of core).

Writes invented minute-level records with ``model.cli.synth`` under /tmp (never in the project),
then, each in a fresh process so the peak memory (maximum resident size) is its own:

- ``audit``: ``model.audit.audit_records`` on the files: reading, every row check, the
  per-case integration, sums and costs (the default engine: file by file, each file's
  Parquet columns read once with pyarrow; ``--engine`` picks another);
- ``numpy``: a bare numpy pass over the same columns: the nine columns the audit reads
  (case id, theatre and agent as dictionaries, time, the three flows, dial, end-tidal),
  with one sum over each row (FGF x dial x dt, and the end-tidal), the floor any audit
  must pay; ``numpy-5``: the same over five of them (time, flows, dial), the bare pass of
  earlier figures, kept for comparison.

Prints wall time and CPU time (both processes' own, so other work on the machine shows
less in it), peak memory, the ratios audit / numpy and the load average. Goals: 2 million
rows under 1 s and at most 3x the bare pass; 200 million rows across Parquet files under
5 minutes and at most 4x the bare pass, peak memory under 4 GB. No assertions (speed
goals are reported, never tested). Deletes the data afterwards unless ``--keep``.

    .venv/bin/python benchmarks/bench_audit.py [--rows 2000000] [--memory-limit 3GB] [--keep]
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import shutil
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))


def _peak_mb() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def measure_audit(files, memory_limit, repeats, engine="auto") -> dict:
    from model.audit.engine import audit_records
    from model.base.units import registry

    registry()  # the unit registry is built once per process; not part of the audit
    times, cpu = [], []
    for _ in range(repeats):
        t, c = time.perf_counter(), time.process_time()
        r = audit_records(files, memory_limit=memory_limit, threads=None, engine=engine)
        times.append(time.perf_counter() - t)
        cpu.append(time.process_time() - c)
    return {
        "seconds": min(times),
        "all_seconds": times,
        "cpu_seconds": min(cpu),
        "rows": r.report.rows_read,
        "cases": int(r.total["cases"]),
        "peak_mb": _peak_mb(),
        "load": os.getloadavg()[0],
    }


TEXT_COLUMNS = ["case_id", "theatre", "agent"]


def measure_numpy(files, repeats, all_columns=True) -> dict:
    import numpy as np
    import pyarrow.parquet as pq

    cols = ["time", "o2 [L/min]", "air [L/min]", "n2o [L/min]", "dial [%]"]
    if all_columns:
        cols = TEXT_COLUMNS + cols + ["end_tidal [%]"]
    times, cpu = [], []
    for _ in range(repeats):
        t, c = time.perf_counter(), time.process_time()
        total = 0.0
        rows = 0
        for f in files:
            tb = pq.read_table(f, columns=cols, read_dictionary=TEXT_COLUMNS if all_columns else None)
            tm = tb["time"].to_numpy().astype("datetime64[s]").astype(np.float64) / 60.0
            fgf = tb["o2 [L/min]"].to_numpy() + tb["air [L/min]"].to_numpy() + tb["n2o [L/min]"].to_numpy()
            dial = tb["dial [%]"].to_numpy()
            dt = np.diff(tm)
            total += float(np.sum(fgf[:-1] * dial[:-1] * np.where((dt > 0) & (dt < 5), dt, 0.0)))
            if all_columns:
                total += float(np.sum(tb["end_tidal [%]"].to_numpy()))
                for name in TEXT_COLUMNS:  # each text column's codes, as the audit takes them
                    codes = tb[name].combine_chunks().indices.to_numpy()
                    total += float(codes[-1]) if len(codes) else 0.0
            rows += len(tm)
            del tb, tm, fgf, dial, dt
        times.append(time.perf_counter() - t)
        cpu.append(time.process_time() - c)
    return {
        "seconds": min(times),
        "all_seconds": times,
        "cpu_seconds": min(cpu),
        "rows": rows,
        "check": total,
        "peak_mb": _peak_mb(),
        "load": os.getloadavg()[0],
    }


def _child(kind, files, memory_limit, repeats, engine="auto") -> dict:
    cmd = [
        sys.executable,
        __file__,
        "--child",
        kind,
        "--repeats",
        str(repeats),
        "--engine",
        engine,
        "--files",
        *map(str, files),
    ]
    if memory_limit:
        cmd += ["--memory-limit", memory_limit]
    out = subprocess.run(cmd, check=True, capture_output=True, text=True).stdout
    return json.loads(out.strip().splitlines()[-1])


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--rows", type=int, default=2_000_000)
    ap.add_argument("--rows-per-file", type=int, default=5_000_000)
    ap.add_argument("--memory-limit", default="3GB", help="duckdb memory limit (default 3GB)")
    ap.add_argument("--repeats", type=int, default=None, help="runs of each (default 3 under 20M rows, else 1)")
    ap.add_argument("--keep", action="store_true", help="keep the generated data")
    ap.add_argument(
        "--engine",
        default="auto",
        choices=("auto", "files", "memory", "sql"),
        help="audit engine (default auto: file by file)",
    )
    ap.add_argument("--child", choices=("audit", "numpy", "numpy-5"), help=argparse.SUPPRESS)
    ap.add_argument("--files", nargs="*", help=argparse.SUPPRESS)
    args = ap.parse_args(argv)
    repeats = args.repeats or (3 if args.rows <= 20_000_000 else 1)
    if args.child:
        res = (
            measure_audit(args.files, args.memory_limit, repeats, args.engine)
            if args.child == "audit"
            else measure_numpy(args.files, repeats, all_columns=args.child == "numpy")
        )
        print(json.dumps(res))
        return 0

    from model.cli.synth import write_many

    out = Path("/tmp") / f"gas-ledger-bench-{args.rows}"
    free = shutil.disk_usage("/tmp").free
    need = args.rows * 8  # about 5.5 bytes a row as zstd Parquet; a margin on top
    if free < need:
        print(f"not enough free space under /tmp: {free / 1e9:.1f} GB free, about {need / 1e9:.1f} GB needed")
        return 1
    t = time.perf_counter()
    if out.exists():
        files = sorted(out.glob("*.parquet"))
    else:
        files = write_many(args.rows, out, seed=2025, rows_per_file=args.rows_per_file)
    gen = time.perf_counter() - t
    size = sum(f.stat().st_size for f in files)
    print(
        f"data: {args.rows:,} rows in {len(files)} Parquet file(s), {size / 1e6:,.0f} MB, "
        f"written in {gen:.1f} s under {out}"
    )
    try:
        print(f"load average before: {', '.join(f'{x:.1f}' for x in os.getloadavg())}")
        bare = _child("numpy", files, None, repeats)
        bare5 = _child("numpy-5", files, None, repeats)
        audit = _child("audit", files, args.memory_limit, repeats, args.engine)
    finally:
        if not args.keep:
            shutil.rmtree(out, ignore_errors=True)
    print(
        f"bare numpy pass, the audit's 9 columns: {bare['seconds']:8.2f} s (CPU {bare['cpu_seconds']:.2f} s)   "
        f"peak {bare['peak_mb']:8,.0f} MB   load average {bare['load']:.1f}"
    )
    print(
        f"bare numpy pass, 5 columns (earlier figures): {bare5['seconds']:8.2f} s "
        f"(CPU {bare5['cpu_seconds']:.2f} s)   load average {bare5['load']:.1f}"
    )
    print(
        f"audit ({args.engine}) : {audit['seconds']:8.2f} s (CPU {audit['cpu_seconds']:.2f} s)   "
        f"peak {audit['peak_mb']:8,.0f} MB   load average {audit['load']:.1f}   "
        f"({audit['rows']:,} rows, {audit['cases']:,} cases; runs {', '.join(f'{s:.2f}' for s in audit['all_seconds'])} s)"
    )
    print(
        f"ratio audit / bare pass over the same 9 columns: {audit['seconds'] / bare['seconds']:.1f} (wall), "
        f"{audit['cpu_seconds'] / bare['cpu_seconds']:.1f} (CPU)"
    )
    print(
        f"ratio audit / bare pass over 5 columns: {audit['seconds'] / bare5['seconds']:.1f} (wall), "
        f"{audit['cpu_seconds'] / bare5['cpu_seconds']:.1f} (CPU)"
    )
    print(f"rows per second (audit): {audit['rows'] / audit['seconds']:,.0f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
