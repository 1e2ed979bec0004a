"""The package's layers import only downwards and have no import cycle (tests/import_contract.py);
the packages that load their names on first use still hand out every public name."""

import ast
import importlib
import json
import os
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

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


# ---- the packages whose names load on first use (PEP 562) ----------------------------------

LAZY_PACKAGES = ("model", "model.io", "model.year", "model.charts")


def _static_homes(package: str) -> dict[str, str]:
    """Name -> module of the imports under ``if TYPE_CHECKING:`` in the package's __init__
    (what the API pages and type checkers read)."""
    path = MODEL.parent.joinpath(*package.split("."), "__init__.py")
    homes = {}
    for node in ast.parse(path.read_text(encoding="utf-8")).body:
        if isinstance(node, ast.If) and isinstance(node.test, ast.Name) and node.test.id == "TYPE_CHECKING":
            for imp in node.body:
                assert isinstance(imp, ast.ImportFrom), ast.dump(imp)
                homes.update({a.name: imp.module for a in imp.names})
    return homes


@pytest.mark.parametrize("package", LAZY_PACKAGES)
def test_every_public_name_of_a_lazy_package_imports_from_it(package):
    """``from <package> import <name>`` works for every name in ``__all__``, in a new
    interpreter, and gives the object of the module the name lives in."""
    code = textwrap.dedent(f"""
        import importlib, json
        import {package} as pkg
        names = list(pkg.__all__)
        exec("from {package} import " + ", ".join(names))
        wrong = [n for n in names
                 if eval(n) is not getattr(importlib.import_module(pkg._HOME[n]), n)]
        missing_from_dir = sorted(set(names) - set(dir(pkg)))
        try:
            pkg.no_such_name
            unknown = "no error"
        except AttributeError as err:
            unknown = str(err)
        print(json.dumps([sorted(pkg._HOME), sorted(names), wrong, missing_from_dir, unknown]))
    """)
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=MODEL.parent,
                         env=dict(os.environ, PYTHONPATH=str(MODEL.parent)), timeout=300)
    assert out.returncode == 0, out.stderr
    homes, names, wrong, missing_from_dir, unknown = json.loads(out.stdout.splitlines()[-1])
    assert homes == names, "the name-to-module table and __all__ differ"
    assert wrong == [] and missing_from_dir == []
    assert unknown == f"module {package!r} has no attribute 'no_such_name'"


@pytest.mark.parametrize("package", LAZY_PACKAGES)
def test_static_imports_of_a_lazy_package_match_what_it_loads(package):
    """The API pages (mkdocstrings reads the imports, never runs them) document the same
    objects the package hands out at run time."""
    module = importlib.import_module(package)
    assert _static_homes(package) == module._HOME
