"""A Case plan rerun after an edit does only the work the open view needs.

Defect 18 of issue 12: the rerun after a new value took 459 ms (goal 300 ms), and about 3 s
in target mode, because every rerun ran the flow sweep, built every figure and wrote every
download. Speed itself is measured in benchmarks/bench_page_rerun.py (never timed here);
these tests check the work that is skipped.

The same defect's cold load (goal: the first page after a server start in under 3 s): the
first run of the dashboard loads only what the Case plan page uses, not the year's model
with scipy.special, the record readers or the report (each costs import time on every
server start).
"""

from __future__ import annotations

import json
import os
import re
import subprocess
import sys
import textwrap

import ui.common
from model.store import STORE_ENV
from tests.helpers import ROOT
from tests.helpers.pages import page

#: Modules the Case plan page's first run has no use for: the year's model and its scipy
#: parts, the record and purchase readers, the audit, the emissions report, the workbook
#: writer (only on download) and the flow sweep (its tab is closed at first).
NOT_FOR_THE_FIRST_PAGE = (
    "scipy.special",
    "scipy.stats",
    "model.year.result",
    "model.year.nodes",
    "model.year.sampling",
    "model.year.simulate",
    "model.io.records",
    "model.io.purchases",
    "model.audit",
    "model.report",
    "openpyxl",
    "model.sweep",
)


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
    """Defect 18: with the first tab (the phases table) open, a new flow runs the case only.

    No sweep and no figure (their tabs are closed), no CSV, workbook or report (built when
    downloaded).
    """
    import model.present.case_charts
    import model.sweep

    at = page("case_plan.py")
    sweeps = _counting(monkeypatch, model.sweep, "flow_sweep")
    csvs = _counting(monkeypatch, ui.common, "to_csv")
    figures = _counting(monkeypatch, model.present.case_charts, "timecourse_figure")
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


def test_the_first_run_of_the_dashboard_loads_only_what_the_case_plan_page_uses(isolated_store):
    """A new process runs ``app.py`` once and lists what of :data:`NOT_FOR_THE_FIRST_PAGE` it imported.

    Its default page is Case plan. Before the lazy packages, ``model``'s
    ``__init__`` pulled in every format and the year's model with scipy.special.
    """
    code = textwrap.dedent(f"""
        import json, sys
        from streamlit.testing.v1 import AppTest
        at = AppTest.from_file({str(ROOT / "app.py")!r}, default_timeout=120)
        at.run()
        assert not at.exception, [e.message for e in at.exception]
        assert any(m.label == "Liquid agent" for m in at.metric), "the Case plan page did not show"
        print(json.dumps(sorted(m for m in {NOT_FOR_THE_FIRST_PAGE!r} if m in sys.modules)))
    """)
    env = dict(os.environ, PYTHONPATH=str(ROOT), **{STORE_ENV: str(isolated_store)})
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT, env=env, timeout=300)
    assert out.returncode == 0, out.stderr[-3000:]
    assert json.loads(out.stdout.splitlines()[-1]) == []


def test_the_warm_start_leaves_the_first_page_nothing_to_import(isolated_store):
    """``serve.py``'s warm-up leaves the first run of ``app.py`` nothing to import.

    The warm-up (run here as its background thread runs it at server start) imports every
    module the first page uses and builds the unit registry: the first run
    of ``app.py`` after it imports no module of ours and no package not loaded yet. The
    page it warms is the one ``app.py`` opens first.
    """
    code = textwrap.dedent(f"""
        import json, sys
        sys.path.insert(0, {str(ROOT)!r})
        from streamlit.testing.v1 import AppTest
        import serve
        serve.warm_up()
        from model.base.units import registry
        built = registry.cache_info().currsize
        before = set(sys.modules)
        at = AppTest.from_file({str(ROOT / "app.py")!r}, default_timeout=120)
        at.run()
        assert not at.exception, [e.message for e in at.exception]
        assert any(m.label == "Liquid agent" for m in at.metric), "the Case plan page did not show"
        new = set(sys.modules) - before
        ours = sorted(m for m in new if m.split(".")[0] in ("model", "ui", "pages"))
        packages = sorted({{m.split(".")[0] for m in new}} - {{m.split(".")[0] for m in before}})
        print(json.dumps([built, ours, packages, str(serve.app.script_path), [str(p) for p in serve.FIRST_PAGE]]))
    """)
    env = dict(os.environ, PYTHONPATH=str(ROOT), **{STORE_ENV: str(isolated_store)})
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT, env=env, timeout=300)
    assert out.returncode == 0, out.stderr[-3000:]
    built, ours, packages, served, first_page = json.loads(out.stdout.splitlines()[-1])
    assert built == 1, "the unit registry was not built"
    assert ours == [] and packages == []
    assert served == str(ROOT / "app.py")
    default = re.findall(r'_page\("([^"]+)"[^)]*default=True\)', (ROOT / "app.py").read_text(encoding="utf-8"))
    assert first_page == [str(ROOT / "app.py")] + [str(ROOT / "pages" / name) for name in default]


def test_without_st_app_serve_runs_the_dashboard_as_a_plain_script(isolated_store):
    """The warm start rests on ``st.App``; a Streamlit without it still serves every page.

    Run as Streamlit runs a page script, with ``st.App`` taken away, ``serve.py`` shows the
    Case plan page of ``app.py`` and says in the server log that there is no warm start.
    """
    code = textwrap.dedent(f"""
        import sys
        sys.path.insert(0, {str(ROOT)!r})
        import streamlit
        del streamlit.App
        from streamlit.testing.v1 import AppTest
        at = AppTest.from_file({str(ROOT / "serve.py")!r}, default_timeout=120)
        at.run()
        assert not at.exception, [e.message for e in at.exception]
        assert any(m.label == "Liquid agent" for m in at.metric), "the Case plan page did not show"
        print("served")
    """)
    env = dict(os.environ, PYTHONPATH=str(ROOT), **{STORE_ENV: str(isolated_store)})
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT, env=env, timeout=300)
    assert out.returncode == 0, out.stderr[-3000:]
    assert out.stdout.splitlines()[-1] == "served"
    assert "no st.App; serving app.py without a warm start" in out.stderr
