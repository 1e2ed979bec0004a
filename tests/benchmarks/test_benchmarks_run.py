"""Every benchmark runs at its tiniest size and records its run as JSON, so none can break unseen.

Each script of ``benchmarks/`` runs with ``--tiny`` in a subprocess, writing its JSON into a
temporary folder; the test checks the fields of the run (benchmarks/benchresults.py), never a
time: speed goals are reported by the benchmarks, not asserted here. The record audit's
benchmark must also notice kept data that are not complete and write them again.
"""

import json
import math
import platform
import re
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
BENCHMARKS = ROOT / "benchmarks"
sys.path.insert(0, str(BENCHMARKS))

import benchresults  # noqa: E402

#: The scripts run here without a browser; bench_load needs one (a browser test below).
SCRIPTS = ["bench_phases", "bench_circle", "bench_year", "bench_limits", "bench_page_rerun", "bench_many_files"]
CHROMIUM = Path("/usr/bin/chromium")


def run_tiny(name: str, results: Path, *extra: str) -> subprocess.CompletedProcess:
    proc = subprocess.run(
        [sys.executable, str(BENCHMARKS / f"{name}.py"), "--tiny", "--results", str(results), *extra],
        cwd=ROOT,
        capture_output=True,
        text=True,
        timeout=900,
    )
    assert proc.returncode == 0, (proc.stdout[-3000:], proc.stderr[-3000:])
    return proc


def check_run(run: dict, *, tiny: bool = True) -> None:
    """The fields every recorded run carries, with values of the right kind."""
    assert tuple(run) == benchresults.RUN_FIELDS
    assert run["tiny"] is tiny
    assert run["recorded"] == "script"
    assert re.fullmatch(r"\d{4}-\d\d-\d\d \d\d:\d\d UTC", run["date"]), run["date"]
    assert run["commit"] and run["commit"] != "unknown"
    assert run["python"] == platform.python_version()
    assert run["machine"]["cpus"] >= 1
    for when in ("before", "after"):
        load = run["load_average"][when]
        assert len(load) == 3 and all(x >= 0 for x in load), load
    assert run["sizes"] and all(isinstance(k, str) for k in run["sizes"])
    assert run["figures"], "a run without figures"
    for entry in run["figures"]:
        assert set(entry) <= {"measure", "value", "unit", "goal"} and entry["measure"] and entry["unit"]
        assert isinstance(entry["value"], (int, float)) and math.isfinite(entry["value"]) and entry["value"] >= 0
        assert entry.get("goal", 1) > 0
    for entry in run["ratios"]:
        assert set(entry) == {"measure", "value", "against"}
        assert entry["value"] > 0 and entry["against"]


@pytest.mark.parametrize("name", SCRIPTS)
def test_benchmark_runs_at_its_tiniest_size_and_records_the_run(name, tmp_path):
    run_tiny(name, tmp_path)
    doc = json.loads((tmp_path / f"{name}.json").read_text(encoding="utf-8"))
    assert doc["benchmark"] == name
    assert len(doc["runs"]) == 1
    check_run(doc["runs"][0])


def test_a_second_run_goes_first_and_keeps_the_earlier_ones(tmp_path):
    run_tiny("bench_phases", tmp_path)
    first = json.loads((tmp_path / "bench_phases.json").read_text(encoding="utf-8"))["runs"]
    run_tiny("bench_phases", tmp_path)
    runs = json.loads((tmp_path / "bench_phases.json").read_text(encoding="utf-8"))["runs"]
    assert len(runs) == 2 and runs[1] == first[0]


def test_a_tiny_run_without_a_results_folder_writes_nothing(tmp_path):
    before = {p: p.read_bytes() for p in (BENCHMARKS / "results").glob("*.json")}
    proc = subprocess.run(
        [sys.executable, str(BENCHMARKS / "bench_phases.py"), "--tiny"],
        cwd=ROOT,
        capture_output=True,
        text=True,
        timeout=300,
    )
    assert proc.returncode == 0, proc.stderr[-2000:]
    assert "not recorded" in proc.stderr
    assert {p: p.read_bytes() for p in (BENCHMARKS / "results").glob("*.json")} == before


def test_the_audit_benchmark_checks_kept_data_and_writes_an_incomplete_set_again(tmp_path):
    data, results = tmp_path / "data", tmp_path / "results"
    first = run_tiny("bench_audit", results, "--keep", "--data", str(data))
    assert "rows in 4 Parquet file(s)" in first.stdout and ": written in" in first.stdout
    # As an interrupted run leaves it: one of the four files missing.
    (data / "records-00001.parquet").unlink()
    second = run_tiny("bench_audit", results, "--keep", "--data", str(data))
    assert "written again: the kept data did not match (3 of 4 files, missing records-00001.parquet)" in second.stdout
    third = run_tiny("bench_audit", results, "--data", str(data))
    assert "reused after checking" in third.stdout
    assert not data.exists()  # no --keep: deleted after the run

    runs = json.loads((results / "bench_audit.json").read_text(encoding="utf-8"))["runs"]
    assert len(runs) == 3
    for run in runs:
        check_run(run)
        # The figures are those of the rows audited, which are the rows asked for.
        assert run["sizes"]["rows audited"] == run["sizes"]["rows asked"] == 20_000
        assert run["sizes"]["rows in the bare pass"] == 20_000 and run["sizes"]["files"] == 4
    assert runs[1]["notes"][0].startswith("data written again: the kept data did not match (3 of 4 files")


def test_the_audit_benchmark_refuses_kept_files_of_the_wrong_size(tmp_path):
    import pyarrow as pa
    import pyarrow.parquet as pq

    sys.path.insert(0, str(ROOT))
    import bench_audit

    folder = tmp_path / "data"
    folder.mkdir()
    assert bench_audit.check_data(folder, 10, 5) == "no completion note (an interrupted run?)"
    note = {"rows": 10, "rows_per_file": 5, "seed": bench_audit.SEED}
    (folder / bench_audit.COMPLETE).write_text(json.dumps(note), encoding="utf-8")
    for name, n in (("records-00000.parquet", 5), ("records-00001.parquet", 3)):
        pq.write_table(pa.table({"x": list(range(n))}), folder / name)
    assert bench_audit.check_data(folder, 10, 5) == "records-00001.parquet holds 3 rows, not 5"
    pq.write_table(pa.table({"x": list(range(5))}), folder / "records-00001.parquet")
    assert bench_audit.check_data(folder, 10, 5) is None
    (folder / "records-00001.parquet").write_bytes(b"PAR1 not a footer")
    assert bench_audit.check_data(folder, 10, 5).startswith("records-00001.parquet cannot be read")
    assert bench_audit.check_data(folder, 12, 5) == (
        "the completion note is for {'rows': 10, 'rows_per_file': 5, 'seed': 2025}"
    )
    shutil.rmtree(folder)
    assert bench_audit.check_data(folder, 10, 5) == "no data yet"


def test_the_load_benchmark_records_what_its_sessions_gave(tmp_path, monkeypatch, capsys):
    # The browser run itself is the browser test below; here its figures are recorded
    # from a run of one session as the driver returns it.
    import bench_load

    session = bench_load.SessionResult(0, "0.50 L/min", load_s=2.0, response_s=0.5, before="10 mL", after="9 mL")
    monkeypatch.setattr(bench_load, "run_load", lambda *a, **k: bench_load.LoadRun([session], 3.0, ""))
    assert bench_load.main(["--tiny", "--results", str(tmp_path)]) == 0
    run = json.loads((tmp_path / "bench_load.json").read_text(encoding="utf-8"))["runs"][0]
    check_run(run)
    figures = {f["measure"]: f["value"] for f in run["figures"]}
    assert figures["sessions finished without error"] == 1 and figures["response, median"] == 0.5
    assert run["sizes"] == {"sessions": 1, "at once": 1}
    assert "finished without error: 1" in capsys.readouterr().out


@pytest.mark.browser
@pytest.mark.skipif(not CHROMIUM.exists(), reason="needs Debian's chromium")
def test_the_load_benchmark_runs_one_session_and_records_it(tmp_path):
    run_tiny("bench_load", tmp_path)
    doc = json.loads((tmp_path / "bench_load.json").read_text(encoding="utf-8"))
    check_run(doc["runs"][0])
    figures = {f["measure"]: f["value"] for f in doc["runs"][0]["figures"]}
    assert figures["sessions finished without error"] == 1


@pytest.mark.browser
@pytest.mark.skipif(not CHROMIUM.exists(), reason="needs Debian's chromium")
def test_the_browser_benchmark_times_each_wait_and_its_bare_reference(tmp_path):
    run_tiny("bench_browser", tmp_path)
    run = json.loads((tmp_path / "bench_browser.json").read_text(encoding="utf-8"))["runs"][0]
    check_run(run)
    measures = {f["measure"] for f in run["figures"]}
    for name in ("cold load", "warm load", "edit", "page switch", "first audit", "bare page: cold load"):
        assert f"{name}: median of {2 if name in ('edit', 'page switch') else 1}" in measures, measures
    goals = {f["measure"].split(":")[0]: f["goal"] for f in run["figures"] if "goal" in f}
    assert goals == {"cold load": 3.0, "edit": 0.5, "page switch": 1.0, "first audit": 3.0}
    assert {r["measure"] for r in run["ratios"]} == {
        "cold load (median)",
        "warm load (median)",
        "edit (median)",
        "page switch (median)",
        "first audit (median)",
    }


def test_every_benchmark_has_its_recorded_results_and_its_readme_entry():
    scripts = sorted(p.stem for p in BENCHMARKS.glob("bench_*.py"))
    assert scripts == sorted([*SCRIPTS, "bench_audit", "bench_load", "bench_browser"])
    readme = (BENCHMARKS / "README.md").read_text(encoding="utf-8")
    for name in scripts:
        assert f"`{name}.py`" in readme, name
        doc = json.loads((BENCHMARKS / "results" / f"{name}.json").read_text(encoding="utf-8"))
        assert doc["benchmark"] == name and doc["runs"], name
        for run in doc["runs"]:
            assert set(benchresults.RUN_FIELDS) <= set(run), (name, set(benchresults.RUN_FIELDS) - set(run))
            assert run["recorded"] in ("script", "by hand") and run["date"] and run["figures"], name
