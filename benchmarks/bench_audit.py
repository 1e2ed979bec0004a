"""Benchmark: auditing case records, a hospital's year and a health system's (out of core).

A hospital's year is 2 million rows; a health system's 200 million rows across Parquet files.

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

Data kept from an earlier run (``--keep``) are used again only when they are complete: the
folder carries a note written after its last file, and the Parquet footers give the file
count and rows per file this run needs. Anything else (an interrupted run's folder, a
missing, extra or damaged file) is written again, and the figures name the rows the audit
and the bare pass actually read; a run whose audit read other rows than it was asked to
reports that and exits with status 1.

    .venv/bin/python benchmarks/bench_audit.py [--rows 2000000] [--memory-limit 3GB] [--keep]
    .venv/bin/python benchmarks/bench_audit.py --tiny --results /tmp/r   # 20,000 rows in 4 files

Writes its figures to benchmarks/results/bench_audit.json (benchmarks/benchresults.py).
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
sys.path.insert(0, str(ROOT / "benchmarks"))

import benchresults  # noqa: E402

#: Seed of the invented records (model.cli.synth.write_many).
SEED = 2025
#: The note a complete data folder carries, written after its last file.
COMPLETE = "complete.json"
TINY_ROWS, TINY_ROWS_PER_FILE = 20_000, 5_000


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


def expected_files(rows: int, rows_per_file: int) -> dict[str, int]:
    """File names and row counts ``model.cli.synth.write_many`` writes for this size."""
    if rows <= rows_per_file:
        return {"records.parquet": rows}
    parts = -(-rows // rows_per_file)
    return {f"records-{i:05d}.parquet": min(rows_per_file, rows - i * rows_per_file) for i in range(parts)}


def check_data(folder: Path, rows: int, rows_per_file: int) -> str | None:
    """None when ``folder`` holds exactly the files this run needs, else what is wrong (one line).

    Reads the completion note and each file's Parquet footer (its row count), not the data.
    """
    import pyarrow.parquet as pq

    if not folder.is_dir():
        return "no data yet"
    try:
        note = json.loads((folder / COMPLETE).read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return "no completion note (an interrupted run?)"
    if note != {"rows": rows, "rows_per_file": rows_per_file, "seed": SEED}:
        return f"the completion note is for {note}"
    want = expected_files(rows, rows_per_file)
    found = {f.name for f in folder.glob("*.parquet")}
    if found != set(want):
        missing, extra = sorted(set(want) - found), sorted(found - set(want))
        return (
            f"{len(found & set(want))} of {len(want)} files"
            + (f", missing {', '.join(missing[:3])}{' ...' if len(missing) > 3 else ''}" if missing else "")
            + (f", not ours {', '.join(extra[:3])}" if extra else "")
        )
    for name, n in want.items():
        try:
            got = pq.ParquetFile(folder / name).metadata.num_rows
        except Exception as exc:  # noqa: BLE001  (any unreadable footer means: write the data again)
            return f"{name} cannot be read ({type(exc).__name__})"
        if got != n:
            return f"{name} holds {got:,} rows, not {n:,}"
    return None


def prepare_data(folder: Path, rows: int, rows_per_file: int) -> tuple[list[Path], str]:
    """The checked data files and how they came (reused, written, written again: why)."""
    from model.cli.synth import write_many

    problem = check_data(folder, rows, rows_per_file)
    if problem is None:
        return [folder / name for name in expected_files(rows, rows_per_file)], "reused after checking"
    how = "written" if problem == "no data yet" else f"written again: the kept data did not match ({problem})"
    partial = folder.with_name(folder.name + ".partial")
    shutil.rmtree(partial, ignore_errors=True)
    shutil.rmtree(folder, ignore_errors=True)
    # Written aside and renamed when complete, so an interrupted run leaves no folder that looks whole.
    write_many(rows, partial, seed=SEED, rows_per_file=rows_per_file)
    (partial / COMPLETE).write_text(
        json.dumps({"rows": rows, "rows_per_file": rows_per_file, "seed": SEED}), encoding="utf-8"
    )
    partial.rename(folder)
    problem = check_data(folder, rows, rows_per_file)
    if problem is not None:
        raise RuntimeError(f"the data just written under {folder} do not check: {problem}")
    return [folder / name for name in expected_files(rows, rows_per_file)], how


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--rows", type=int, default=2_000_000)
    ap.add_argument("--rows-per-file", type=int, default=5_000_000)
    ap.add_argument("--memory-limit", default="3GB", help="duckdb memory limit (default 3GB)")
    ap.add_argument("--repeats", type=int, default=None, help="runs of each (default 3 under 20M rows, else 1)")
    ap.add_argument("--keep", action="store_true", help="keep the generated data")
    ap.add_argument("--data", type=Path, default=None, help="data folder (default /tmp/gas-ledger-bench-ROWS-PERFILE)")
    ap.add_argument(
        "--engine",
        default="auto",
        choices=("auto", "files", "memory", "sql"),
        help="audit engine (default auto: file by file)",
    )
    ap.add_argument("--child", choices=("audit", "numpy", "numpy-5"), help=argparse.SUPPRESS)
    ap.add_argument("--files", nargs="*", help=argparse.SUPPRESS)
    benchresults.add_arguments(ap)
    args = ap.parse_args(argv)
    if args.tiny:
        args.rows, args.rows_per_file, args.repeats = TINY_ROWS, TINY_ROWS_PER_FILE, 1
    repeats = args.repeats or (3 if args.rows <= 20_000_000 else 1)
    if args.child:
        res = (
            measure_audit(args.files, args.memory_limit, repeats, args.engine)
            if args.child == "audit"
            else measure_numpy(args.files, repeats, all_columns=args.child == "numpy")
        )
        print(json.dumps(res))
        return 0

    out = args.data or Path("/tmp") / f"gas-ledger-bench-{args.rows}-{args.rows_per_file}"
    free = shutil.disk_usage(out.parent if out.parent.exists() else "/tmp").free
    need = args.rows * 8  # about 5.5 bytes a row as zstd Parquet; a margin on top
    if check_data(out, args.rows, args.rows_per_file) is not None and free < need:
        print(f"not enough free space under {out.parent}: {free / 1e9:.1f} GB free, about {need / 1e9:.1f} GB needed")
        return 1
    run = benchresults.new_run(
        {"rows asked": args.rows, "rows per file": args.rows_per_file, "repeats": repeats, "engine": args.engine},
        args.tiny,
    )
    t = time.perf_counter()
    files, how = prepare_data(out, args.rows, args.rows_per_file)
    gen = time.perf_counter() - t
    size = sum(f.stat().st_size for f in files)
    print(
        f"data: {args.rows:,} rows in {len(files)} Parquet file(s), {size / 1e6:,.0f} MB under {out}: "
        + (f"{how} in {gen:.1f} s" if how.startswith("written") else how)
    )
    run["notes"].append(f"data {how}")
    run["sizes"].update({"files": len(files), "MB": round(size / 1e6, 1)})
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
        f"peak {bare['peak_mb']:8,.0f} MB   load average {bare['load']:.1f}   ({bare['rows']:,} rows)"
    )
    print(
        f"bare numpy pass, 5 columns (earlier figures): {bare5['seconds']:8.2f} s "
        f"(CPU {bare5['cpu_seconds']:.2f} s)   load average {bare5['load']:.1f}"
    )
    print(
        f"audit ({args.engine}) : {audit['seconds']:8.2f} s (CPU {audit['cpu_seconds']:.2f} s)   "
        f"peak {audit['peak_mb']:8,.0f} MB   load average {audit['load']:.1f}   "
        f"({audit['rows']:,} rows, {audit['cases']:,} cases; "
        f"runs {', '.join(f'{s:.2f}' for s in audit['all_seconds'])} s)"
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
    run["sizes"].update({"rows audited": audit["rows"], "rows in the bare pass": bare["rows"], "cases": audit["cases"]})
    goal_s = 1.0 if args.rows <= 2_000_000 else 300.0
    benchresults.figure(run, "audit, wall (best)", audit["seconds"], "s", goal=goal_s)
    benchresults.figure(run, "audit, CPU (best)", audit["cpu_seconds"], "s")
    benchresults.figure(
        run, "audit, peak resident memory", audit["peak_mb"], "MB", goal=None if args.rows <= 2_000_000 else 4000
    )
    benchresults.figure(run, "bare pass over the 9 columns, wall (best)", bare["seconds"], "s")
    benchresults.figure(run, "bare pass over the 9 columns, CPU (best)", bare["cpu_seconds"], "s")
    benchresults.figure(run, "bare pass over 5 columns, CPU (best)", bare5["cpu_seconds"], "s")
    ratio_goal = "3" if args.rows <= 2_000_000 else "4"
    against = f"bare pass over the same 9 columns (goal at most {ratio_goal}x)"
    benchresults.ratio(run, "audit / bare pass, wall", audit["seconds"] / bare["seconds"], against)
    benchresults.ratio(run, "audit / bare pass, CPU", audit["cpu_seconds"] / bare["cpu_seconds"], against)
    benchresults.ratio(
        run,
        "audit / bare pass over 5 columns, CPU",
        audit["cpu_seconds"] / bare5["cpu_seconds"],
        "bare pass over 5 columns",
    )
    status = 0
    if audit["rows"] != args.rows or bare["rows"] != args.rows:
        message = (
            f"asked for {args.rows:,} rows, but the audit read {audit['rows']:,} and the bare pass "
            f"{bare['rows']:,}: these figures are not those of {args.rows:,} rows"
        )
        print(message)
        run["notes"].append(message)
        status = 1
    benchresults.finish("bench_audit", run, args.results)
    return status


if __name__ == "__main__":
    sys.exit(main())
