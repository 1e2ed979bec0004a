"""The package's layers import only downwards and have no import cycle (tests/import_contract.py)."""

from pathlib import Path

from import_contract import check

MODEL = Path(__file__).resolve().parents[1] / "model"


def test_model_imports_follow_the_layers_without_cycles():
    assert check(MODEL) == []


def _package(tmp_path, files):
    root = tmp_path / "model"
    for name, text in files.items():
        path = root / name
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(text)
    return root


def test_contract_reports_a_cycle(tmp_path):
    root = _package(tmp_path, {"__init__.py": "", "vapour.py": "from model.case import x\n",
                               "case.py": "from model.vapour import y\n"})
    problems = check(root)
    assert any(p.startswith("import cycle:") for p in problems), problems


def test_contract_reports_a_lazy_upward_import(tmp_path):
    root = _package(tmp_path, {"__init__.py": "", "reference.py": "def f():\n    from model.io.plans import g\n",
                               "io/__init__.py": "", "io/plans.py": "g = 1\n"})
    problems = check(root)
    assert problems == ["model/reference.py:2: model.reference (reference) imports model.io.plans "
                        "(formats), a higher layer"], problems


def test_contract_reports_user_interface_imports_and_the_root(tmp_path):
    root = _package(tmp_path, {"__init__.py": "", "case.py": "import streamlit\nfrom model import x\n"})
    problems = check(root)
    assert any("streamlit" in p for p in problems) and any("package root" in p for p in problems), problems


def test_contract_reports_a_module_outside_every_layer(tmp_path):
    root = _package(tmp_path, {"__init__.py": "", "stray.py": ""})
    assert check(root) == ["model/stray.py: module model.stray belongs to no layer"]


def test_charts_sit_above_the_report_and_below_the_command_line(tmp_path):
    from import_contract import layer_of

    assert layer_of("model.report.document") < layer_of("model.charts.report") < layer_of("model.cli.report")
    # The report layer may not reach up to the charts (its HTML gets figures handed in).
    root = _package(tmp_path, {"__init__.py": "", "report/__init__.py": "",
                               "report/document.py": "from model.charts.report import report_figures\n",
                               "charts/__init__.py": "", "charts/report.py": "report_figures = 1\n"})
    assert check(root) == ["model/report/document.py:1: model.report.document (report) imports "
                           "model.charts.report (charts), a higher layer"]


def test_the_chart_layer_loads_without_streamlit_or_ui():
    import subprocess
    import sys

    code = ("import sys, model.charts, model.charts.report; "
            "print(sorted(m for m in sys.modules if m.split('.')[0] in ('streamlit', 'ui', 'pages')))")
    proc = subprocess.run([sys.executable, "-c", code], cwd=MODEL.parent, capture_output=True, text=True, timeout=120)
    assert proc.returncode == 0, proc.stderr
    assert proc.stdout.strip() == "[]"
