"""Benchmark: many small record files, as a department's daily exports pile up over the years.

Writes invented records under /tmp (never in the project): ``--csv`` CSV files of
``--rows`` rows each (one case a file, minute samples) and ``--parquet`` Parquet files of the
same rows, then audits each set with ``model.audit.audit_records`` (reading, every row check,
the per-case integration, sums and costs), against a bare pass over the same files: each
file's bytes read and cut into lines (``model.io.csv_lines.split_csv_lines``), or each
Parquet file's columns read with pyarrow, the floor any reader pays per file.

Prints wall and CPU time, the time per file and the ratio audit / bare pass. Goal: 2,000
CSV files of 30 rows in a few seconds (before the CSV files of one layout were read as one
table, 114 s: some 57 ms a file). No assertions (speed goals are reported, never tested).

    .venv/bin/python benchmarks/bench_many_files.py [--csv 2000] [--parquet 300] [--rows 30]
    .venv/bin/python benchmarks/bench_many_files.py --tiny --results /tmp/r   # 20 and 5 files

Writes its figures to benchmarks/results/bench_many_files.json (benchmarks/benchresults.py).
"""

from __future__ import annotations

import argparse
import shutil
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
sys.path.insert(0, str(ROOT / "benchmarks"))

import benchresults  # noqa: E402

#: Goal for the CSV set at full size. [s]
GOAL_S = 5.0
HEADER = "case_id,time,theatre,agent,o2,air,dial\n"


def write_files(folder: Path, n_csv: int, n_parquet: int, rows: int) -> tuple[list[Path], list[Path]]:
    """Invented records: one case per file (Fernhollow's theatre Alder), minute samples."""
    import pandas as pd

    csv_files, parquet_files = [], []
    for i in range(n_csv + n_parquet):
        day = pd.Timestamp("2020-01-01 08:00") + pd.Timedelta(days=i)
        times = [day + pd.Timedelta(minutes=k) for k in range(rows)]
        if i < n_csv:
            p = folder / f"day-{i:05d}.csv"
            p.write_text(
                HEADER + "".join(f"C{i},{t:%Y-%m-%d %H:%M:%S},Alder,sevoflurane,0.5,0.5,2\n" for t in times),
                encoding="utf-8",
            )
            csv_files.append(p)
        else:
            p = folder / f"day-{i:05d}.parquet"
            frame = {"case_id": [f"C{i}"] * rows, "time": times, "theatre": ["Alder"] * rows}
            frame |= {"agent": ["sevoflurane"] * rows, "o2": [0.5] * rows, "air": [0.5] * rows, "dial": [2.0] * rows}
            pd.DataFrame(frame).to_parquet(p, index=False)
            parquet_files.append(p)
    return csv_files, parquet_files


def bare_pass(files: list[Path]) -> int:
    """Each file read once: CSV bytes cut into lines, Parquet columns read. Returns the rows seen."""
    import numpy as np
    import pyarrow.parquet as pq

    from model.io.csv_lines import split_csv_lines

    rows = 0
    for p in files:
        if p.suffix == ".csv":
            rows += len(split_csv_lines(np.fromfile(p, dtype=np.uint8))) - 1
        else:
            rows += pq.read_table(p).num_rows
    return rows


def timed(work):
    """(result, wall [s], CPU [s]) of ``work()``."""
    wall, cpu = time.perf_counter(), time.process_time()
    out = work()
    return out, time.perf_counter() - wall, time.process_time() - cpu


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--csv", type=int, default=2000, help="CSV files (default 2000)")
    ap.add_argument("--parquet", type=int, default=300, help="Parquet files (default 300)")
    ap.add_argument("--rows", type=int, default=30, help="rows per file (default 30)")
    benchresults.add_arguments(ap)
    args = ap.parse_args(argv)
    n_csv, n_parquet, rows = (20, 5, 30) if args.tiny else (args.csv, args.parquet, args.rows)
    from model.audit.engine import audit_records

    run = benchresults.new_run({"CSV files": n_csv, "Parquet files": n_parquet, "rows per file": rows}, args.tiny)
    folder = Path(tempfile.mkdtemp(prefix="gas-ledger-bench-many-"))
    try:
        csv_files, parquet_files = write_files(folder, n_csv, n_parquet, rows)
        audit_records(csv_files[:2] + parquet_files[:1])  # warm: numba's cached machine code, imports
        for label, files in (("CSV", csv_files), ("Parquet", parquet_files)):
            if not files:
                continue
            result, wall, cpu = timed(lambda files=files: audit_records(files))
            seen, bare_wall, bare_cpu = timed(lambda files=files: bare_pass(files))
            if result.report.rows_valid != seen or len(result.cases) != len(files):
                print(f"{label}: the audit used {result.report.rows_valid} rows of {seen}", file=sys.stderr)
                return 1
            goal = GOAL_S if label == "CSV" and not args.tiny else None
            benchresults.figure(run, f"{label}: audit of {len(files):,} files, wall", wall, "s", goal=goal)
            benchresults.figure(run, f"{label}: audit, CPU", cpu, "s")
            benchresults.figure(run, f"{label}: audit per file, wall", 1000 * wall / len(files), "ms")
            benchresults.figure(run, f"{label}: bare pass, wall", bare_wall, "s")
            benchresults.ratio(run, f"{label}: audit / bare pass (CPU)", cpu / max(bare_cpu, 1e-3), "bare pass")
            print(
                f"{label}: {len(files):,} files of {rows} rows: audit {wall:.2f} s wall, {cpu:.2f} s CPU "
                f"({1000 * wall / len(files):.1f} ms a file); bare pass {bare_wall:.2f} s"
            )
    finally:
        shutil.rmtree(folder, ignore_errors=True)
    benchresults.finish("bench_many_files", run, args.results)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
