"""The package's layers import only downwards, with no cycle and no dashboard import.

The import-linter contracts in pyproject.toml), and the packages that load their names on first
use hand out every name their stub lists.
"""

import ast
import json
import os
import shutil
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
LINT_IMPORTS = Path(sys.executable).with_name("lint-imports")


def _lint(root: Path) -> subprocess.CompletedProcess:
    return subprocess.run(
        [str(LINT_IMPORTS), "--config", str(root / "pyproject.toml"), "--no-cache"],
        cwd=root,
        capture_output=True,
        text=True,
        timeout=300,
        env=dict(os.environ, PYTHONPATH=str(root)),
    )


def test_the_package_keeps_its_layer_contracts():
    out = _lint(ROOT)
    assert out.returncode == 0, out.stdout + out.stderr
    assert "3 kept, 0 broken" in out.stdout


@pytest.fixture(scope="module")
def package_copy(tmp_path_factory):
    """A copy of the package and its contracts, to plant wrong imports in."""
    root = tmp_path_factory.mktemp("copy")
    shutil.copytree(ROOT / "model", root / "model", ignore=shutil.ignore_patterns("__pycache__"))
    shutil.copytree(ROOT / "ui", root / "ui", ignore=shutil.ignore_patterns("__pycache__"))
    shutil.copy(ROOT / "pyproject.toml", root)
    return root


@pytest.mark.parametrize(
    "module, line, broken",
    [
        # an upward import hidden inside a function: physics reaching up to the file formats
        (
            "model/vapour.py",
            "def _late():\n    from model.io.plans import load_plan\n",
            "model's layers import only downwards",
        ),
        # the base reaching up to the store
        ("model/base/files.py", "import model.store.core\n", "model's layers import only downwards"),
        # a cycle between two modules of one package
        ("model/audit/result.py", "from model.audit import engine\n", "no import cycles inside a package"),
        # the model importing the dashboard
        ("model/present/theme.py", "import streamlit\n", "the model is free of the dashboard"),
        # a module that belongs to no layer
        ("model/stray.py", "x = 1\n", "model's layers import only downwards"),
    ],
)
def test_the_contract_fails_on_a_wrong_import(package_copy, module, line, broken):
    path = package_copy / module
    before = path.read_text() if path.exists() else None
    try:
        path.write_text((before or "") + "\n" + line)
        out = _lint(package_copy)
    finally:
        if before is None:
            path.unlink()
        else:
            path.write_text(before)
    assert out.returncode != 0, out.stdout
    assert f"{broken} BROKEN" in out.stdout, out.stdout


def test_the_chart_layer_loads_without_streamlit_or_ui():
    code = (
        "import sys, model.present, model.present.report_charts, model.present.case_charts; "
        "print(sorted(m for m in sys.modules if m.split('.')[0] in ('streamlit', 'ui', 'pages')))"
    )
    proc = subprocess.run([sys.executable, "-c", code], cwd=ROOT, capture_output=True, text=True, timeout=120)
    assert proc.returncode == 0, proc.stderr
    assert proc.stdout.strip() == "[]"


# ---- the packages whose names load on first use (lazy_loader stubs) -------------------------

LAZY_PACKAGES = ("model", "model.io", "model.year", "model.present")


def _stub_homes(package: str) -> dict[str, str]:
    """Name -> module, as the package's ``__init__.pyi`` lists them.

    The stub is what type checkers and the API pages read.
    """
    path = ROOT.joinpath(*package.split("."), "__init__.pyi")
    homes = {}
    for node in ast.parse(path.read_text(encoding="utf-8")).body:
        assert isinstance(node, ast.ImportFrom) and node.level == 1, ast.dump(node)
        homes.update({a.name: f"{package}.{node.module}" for a in node.names})
    return homes


@pytest.mark.parametrize("package", LAZY_PACKAGES)
def test_every_name_of_a_lazy_package_imports_from_its_home(package):
    """``from <package> import <name>`` works for every name of the stub.

    In a new interpreter, it gives the object of the module the stub names, and an unknown name is a
    plain AttributeError.
    """
    homes = _stub_homes(package)
    code = textwrap.dedent(f"""
        import importlib, json
        import {package} as pkg
        homes = {homes!r}
        exec("from {package} import " + ", ".join(homes))
        wrong = [n for n, m in homes.items() if eval(n) is not getattr(importlib.import_module(m), n)]
        try:
            pkg.no_such_name
            unknown = "no error"
        except AttributeError as err:
            unknown = str(err)
        print(json.dumps([sorted(pkg.__all__), sorted(set(homes) - set(dir(pkg))), wrong, unknown]))
    """)
    out = subprocess.run(
        [sys.executable, "-c", code],
        capture_output=True,
        text=True,
        cwd=ROOT,
        env=dict(os.environ, PYTHONPATH=str(ROOT)),
        timeout=300,
    )
    assert out.returncode == 0, out.stderr
    names, missing_from_dir, wrong, unknown = json.loads(out.stdout.splitlines()[-1])
    assert names == sorted(homes)
    assert missing_from_dir == [] and wrong == []
    assert "no_such_name" in unknown and unknown != "no error"
