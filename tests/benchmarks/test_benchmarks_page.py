"""The benchmarks page: the MkDocs hook turns each results file into tables.

The page (docs/benchmarks.md) has a place for every benchmark, and the hook
(docs/hooks/benchmarks.py) fills it from benchmarks/results/.
"""

import importlib.util
import json
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
PAGE = ROOT / "docs" / "benchmarks.md"


def _hook():
    spec = importlib.util.spec_from_file_location("benchmarks_hook", ROOT / "docs" / "hooks" / "benchmarks.py")
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def test_mkdocs_declares_the_hook_and_keeps_it_out_of_the_site():
    config = (ROOT / "mkdocs.yml").read_text(encoding="utf-8")
    assert "hooks:\n  - docs/hooks/benchmarks.py" in config
    assert "exclude_docs: |\n  hooks/" in config
    assert "Benchmarks: benchmarks.md" in config


def test_the_page_has_a_place_for_every_benchmark():
    hook = _hook()
    names = hook.MARKER.findall(PAGE.read_text(encoding="utf-8"))
    scripts = sorted(p.stem for p in (ROOT / "benchmarks").glob("bench_*.py"))
    assert sorted(names) == scripts


def test_a_results_file_becomes_tables_newest_run_first(tmp_path):
    hook = _hook()
    run = {
        "recorded": "script",
        "date": "2026-12-04 05:00 UTC",
        "commit": "abc1234",
        "python": "3.11.7",
        "machine": {"cpus": 2, "system": "Linux x86_64"},
        "load_average": {"before": [0.5, 0.25, 0.125], "after": [1.0, 0.5, 0.25]},
        "sizes": {"rows": 2_000_000},
        "tiny": False,
        "figures": [{"measure": "audit, wall (best)", "value": 0.25, "unit": "s", "goal": 1.0}],
        "ratios": [{"measure": "audit / bare pass", "value": 2.5, "against": "bare pass"}],
        "notes": ["a note"],
    }
    older = dict(run, recorded="by hand", date="2026-12-01", load_average={"before": "about 8", "after": None})
    older["figures"] = [{"measure": "audit | old", "value": "0.3-0.4", "unit": "s"}]
    (tmp_path / "bench_x.json").write_text(json.dumps({"benchmark": "bench_x", "runs": [run, older]}))
    text = hook.render("before\n<!-- benchmark-results: bench_x -->\nafter\n", tmp_path)
    assert text.startswith("before\n2 recorded run(s), newest first") and text.endswith("after\n")
    assert text.index("2026-12-04") < text.index("2026-12-01")
    assert "| audit, wall (best) | 0.25 | s | 1 | 0.25 x |" in text
    assert "| audit / bare pass | 2.5 | bare pass |" in text
    assert "load average before: 0.50, 0.25, 0.12 (1, 5, 15 min), after: 1.00, 0.50, 0.25 (1, 5, 15 min)" in text
    assert "Sizes: rows 2,000,000." in text
    # A run recorded by hand says so, and its text figures and pipes stay inside their cells.
    assert "**2026-12-01**, recorded by hand." in text and "load average before: about 8, after: not recorded" in text
    assert "| audit \\| old | 0.3\u20110.4 | s | - | - |" in text
    assert "No run of `bench_y.py` is recorded yet." in hook.render("<!-- benchmark-results: bench_y -->", tmp_path)


def test_numbers_are_shown_as_people_read_them():
    hook = _hook()
    assert hook.number_text(2_522_879) == "2,522,879"
    assert hook.number_text(1671.4) == "1,671"
    assert hook.number_text(0.41) == "0.41"
    assert hook.number_text(4e-16) == "4.0e-16"
    assert hook.number_text(None) == "-"
    assert hook.number_text("did not finish in 400") == "did not finish in 400"
