"""The import contract of the ``model`` package: layers that import only downwards, no cycles.

Layers, lowest first (DEVELOPERS.md, "Layout"): shared base (errors, units, file reading),
reference data, physics and accounting, file formats, the record audit, the emissions report
(reads audit results), the charts (colours, plotly template, the report's figures), the
store, the command line. A module may import its own layer or a lower one; the package root
(``model/__init__.py``, the public API) sits above them all and no module imports it.
Every import statement counts, including those inside functions.
"""

from __future__ import annotations

import ast
import graphlib
from pathlib import Path

LAYERS = (
    ("base", ("model.errors", "model.units", "model.files", "model.lazy")),
    ("reference", ("model.reference",)),
    ("physics", ("model.vapour", "model.freshgas", "model.mac", "model.patient", "model.uptake",
                 "model.circle", "model.emissions", "model.plan", "model.cautions", "model.case", "model.sweep",
                 "model.year")),
    ("formats", ("model.io",)),
    ("audit", ("model.audit",)),
    ("report", ("model.report",)),
    ("charts", ("model.charts",)),
    ("store", ("model.store", "model.access", "model.changelog")),
    ("command line", ("model.cli", "model.__main__")),
)
FORBIDDEN = ("streamlit", "ui", "pages")


def module_name(path: Path, root: Path) -> str:
    parts = list(path.relative_to(root.parent).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def layer_of(module: str, package: str = "model", layers=LAYERS) -> int | None:
    """Index of the layer holding ``module`` (by longest prefix), None for the package root."""
    best, best_len = None, -1
    for i, (_, prefixes) in enumerate(layers):
        for prefix in prefixes:
            prefix = package + prefix[len("model"):]
            if (module == prefix or module.startswith(prefix + ".")) and len(prefix) > best_len:
                best, best_len = i, len(prefix)
    return best


def imports_of(path: Path, module: str, package: str) -> list[tuple[str, int]]:
    """Package-internal modules imported by the file at ``path`` (absolute or relative), with lines."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    is_pkg = path.name == "__init__.py"
    out = []
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            out += [(a.name, node.lineno) for a in node.names]
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = module.split(".")
                base = base[: len(base) - node.level + (1 if is_pkg else 0)]
                target = ".".join(base + ([node.module] if node.module else []))
            else:
                target = node.module or ""
            out.append((target, node.lineno))
            # ``from model.io import plans`` imports the submodule model.io.plans
            out += [(f"{target}.{a.name}", node.lineno) for a in node.names]
    return out


def check(root: Path, layers=LAYERS) -> list[str]:
    """Every breach of the contract in the package at ``root``, one line each (empty: none)."""
    package = root.name
    files = sorted(root.rglob("*.py"))
    modules = {module_name(p, root): p for p in files}
    problems, graph = [], {m: set() for m in modules}
    for module, path in modules.items():
        here = layer_of(module, package, layers)
        where = path.relative_to(root.parent)
        if here is None and module != package:
            problems.append(f"{where}: module {module} belongs to no layer")
            continue
        for target, line in imports_of(path, module, package):
            top = target.split(".")[0]
            if top in FORBIDDEN:
                problems.append(f"{where}:{line}: imports {target} (user-interface code)")
                continue
            if top != package or target not in modules:
                continue
            if target == module:
                continue
            if module != package:
                graph[module].add(target)
            there = layer_of(target, package, layers)
            if target == package and module != package:
                problems.append(f"{where}:{line}: imports the package root {package}")
            elif here is not None and there is not None and there > here:
                problems.append(f"{where}:{line}: {module} ({layers[here][0]}) imports {target} "
                                f"({layers[there][0]}), a higher layer")
    # A subpackage's __init__ imports its own modules: not a cycle of design.
    for module in graph:
        graph[module] = {t for t in graph[module] if not (module in modules and modules[module].name == "__init__.py"
                                                          and t.startswith(module + "."))}
    # Importing ``a.b`` runs ``a/__init__``: count that edge for modules outside ``a``.
    try:
        graphlib.TopologicalSorter(graph).prepare()
    except graphlib.CycleError as exc:
        problems.append("import cycle: " + " -> ".join(exc.args[1]))
    return problems
