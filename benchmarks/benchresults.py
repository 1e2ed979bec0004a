"""What every benchmark records: its figures as JSON under ``benchmarks/results/``.

Each script builds one *run* with :func:`new_run` before it measures (date, commit, Python,
machine, load average before), adds figures and ratios, and hands it to :func:`finish`
(load average after; written to ``<results>/<name>.json``). A results file keeps the runs
newest first, so figures recorded earlier (by hand, before the scripts wrote JSON) stay
beside the new ones; ``docs/hooks/benchmarks.py`` renders the files on docs/benchmarks.md.

A run of a script at ``--tiny`` size (the test suite's) is written only where ``--results``
names a folder, so a test never replaces the recorded figures.
"""

from __future__ import annotations

import argparse
import datetime as _dt
import json
import os
import platform
import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
RESULTS = ROOT / "benchmarks" / "results"
#: Runs a results file keeps (newest first).
KEEP_RUNS = 20
#: Fields every run carries (tests/benchmarks/test_benchmarks_run.py checks them).
RUN_FIELDS = (
    "recorded",
    "date",
    "commit",
    "python",
    "machine",
    "load_average",
    "sizes",
    "tiny",
    "figures",
    "ratios",
    "notes",
)


def load_average() -> list[float] | None:
    """The 1, 5 and 15 minute load averages, or None where the system gives none."""
    try:
        return [round(x, 2) for x in os.getloadavg()]
    except (AttributeError, OSError):
        return None


def git_commit() -> str:
    """Short commit of the checkout measured, with ``+changes`` when its files differ."""
    try:
        head = subprocess.run(
            ["git", "rev-parse", "--short", "HEAD"], cwd=ROOT, capture_output=True, text=True, timeout=10
        )
        dirty = subprocess.run(
            ["git", "status", "--porcelain", "--untracked-files=no"],
            cwd=ROOT,
            capture_output=True,
            text=True,
            timeout=10,
        )
    except (OSError, subprocess.SubprocessError):
        return "unknown"
    commit = head.stdout.strip() or "unknown"
    return commit + ("+changes" if dirty.stdout.strip() else "")


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """``--tiny`` and ``--results``, the two options every benchmark takes."""
    parser.add_argument(
        "--tiny", action="store_true", help="the smallest size, to check the script runs (figures mean nothing)"
    )
    parser.add_argument(
        "--results",
        type=Path,
        default=None,
        help=f"folder for <name>.json (default {RESULTS.relative_to(ROOT)}; a --tiny run writes only where named)",
    )


def new_run(sizes: dict, tiny: bool) -> dict:
    """A run measured now, before any figure: date, commit, Python, machine, load before."""
    return {
        "recorded": "script",
        "date": _dt.datetime.now(_dt.UTC).strftime("%Y-%m-%d %H:%M UTC"),
        "commit": git_commit(),
        "python": platform.python_version(),
        "machine": {"cpus": os.cpu_count(), "system": f"{platform.system()} {platform.machine()}"},
        "load_average": {"before": load_average(), "after": None},
        "sizes": dict(sizes),
        "tiny": bool(tiny),
        "figures": [],
        "ratios": [],
        "notes": [],
    }


def figure(run: dict, measure: str, value, unit: str, goal=None) -> None:
    """Add one figure (``value`` in ``unit``; ``goal`` in the same unit when there is one)."""
    entry = {"measure": measure, "value": _plain(value), "unit": unit}
    if goal is not None:
        entry["goal"] = goal
    run["figures"].append(entry)


def ratio(run: dict, measure: str, value, against: str) -> None:
    """Add one ratio: ``measure`` divided by ``against`` (a bare pass or loop of the same run)."""
    run["ratios"].append({"measure": measure, "value": _plain(value), "against": against})


def _plain(value):
    try:
        value = float(value)
    except (TypeError, ValueError):
        return value
    return float(f"{value:.6g}") if value == value and abs(value) != float("inf") else None


def finish(name: str, run: dict, results: Path | None) -> Path | None:
    """Record the load after and write the run first in ``<results>/<name>.json``.

    A ``--tiny`` run is written only when ``results`` is given. Returns the file written.
    """
    run["load_average"]["after"] = load_average()
    if results is None:
        if run["tiny"]:
            print("tiny run: not recorded (give --results FOLDER to write it)", file=sys.stderr)
            return None
        results = RESULTS
    path = Path(results) / f"{name}.json"
    doc = {"benchmark": name, "runs": []}
    if path.exists():
        doc = json.loads(path.read_text(encoding="utf-8"))
    doc["runs"] = [run, *doc.get("runs", [])][:KEEP_RUNS]
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(json.dumps(doc, indent=1, ensure_ascii=False) + "\n", encoding="utf-8")
    print(f"written: {path}", file=sys.stderr)
    return path
