"""A Case plan rerun after an edit does only the work the open view needs.

Defect 18 of issue 12: the rerun after a new value took 459 ms (goal 300 ms), and about 3 s
in target mode, because every rerun ran the flow sweep, built every figure and wrote every
download. Speed itself is measured in benchmarks/bench_page_rerun.py (never timed here);
these tests check the work that is skipped.
"""

from __future__ import annotations

import model.sweep
import ui.common

from pagetest import isolated_store, page  # noqa: F401  (isolated_store: autouse fixture)


def _edit_o2(at, text: str) -> None:
    key = at.data_editor[0].key
    at.session_state[key] = {"edited_rows": {1: {"O2": text}}, "added_rows": [], "deleted_rows": []}
    at.run()
    assert not at.exception, [e.message for e in at.exception]


def _counting(monkeypatch, module, name: str) -> list:
    calls = []
    original = getattr(module, name)

    def counted(*a, **k):
        calls.append(1)
        return original(*a, **k)
    monkeypatch.setattr(module, name, counted)
    return calls


def test_an_edit_runs_no_flow_sweep_and_builds_no_download_until_asked(monkeypatch):
    """Defect 18: with the first tab (the phases table) open, a new flow runs the case only: no
    sweep and no figure (their tabs are closed), no CSV, workbook or report (built when
    downloaded)."""
    import ui.charts

    at = page("case_plan.py")
    sweeps = _counting(monkeypatch, model.sweep, "flow_sweep")
    csvs = _counting(monkeypatch, ui.common, "to_csv")
    figures = _counting(monkeypatch, ui.charts, "timecourse_figure")
    _edit_o2(at, "0.37 L/min")
    assert any(m.label == "Liquid agent" for m in at.metric)
    assert sweeps == [] and csvs == [] and figures == []
    assert not at.get("plotly_chart")
    # Opening the sweep's tab runs it, once, for the plan as edited.
    at.session_state["cp_tab"] = "Flow sweep"
    at.run()
    assert len(sweeps) == 1
    assert any("lowest cost at" in m.value for m in at.markdown)
    assert csvs == []
