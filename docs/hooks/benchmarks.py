"""MkDocs hook: the recorded benchmark runs (benchmarks/results/*.json) as tables on benchmarks.md.

Declared in mkdocs.yml (``hooks:``). Each ``<!-- benchmark-results: NAME -->`` line of
docs/benchmarks.md becomes the runs of ``benchmarks/results/NAME.json``, newest first: the
date, who recorded it (the script, or by hand before the scripts wrote JSON), commit, Python,
the load average before and after, the sizes, then the figures beside their goals and the
ratios against the bare pass of the same run. Read at build time; nothing is fetched.
"""

from __future__ import annotations

import json
import re
from pathlib import Path

RESULTS = Path(__file__).resolve().parents[2] / "benchmarks" / "results"
MARKER = re.compile(r"^<!-- benchmark-results: (\w+) -->$", re.M)
PAGE = "benchmarks.md"


def number_text(value) -> str:
    """A figure as people read it: three significant figures, thousands separated; text as it is."""
    if value is None:
        return "-"
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        # A range of figures ("0.22-0.30") keeps together in its cell: a non-breaking hyphen.
        return re.sub(r"(?<=\d)-(?=\d)", "\u2011", str(value))
    if isinstance(value, int):
        return f"{value:,}"
    if value != 0 and (abs(value) < 1e-3 or abs(value) >= 1e6):
        return f"{value:.1e}"
    if abs(value) >= 100:
        return f"{value:,.0f}"
    return f"{value:.3g}"


def load_text(load) -> str:
    """The load averages of a run (three figures, or the text recorded by hand)."""
    if load is None:
        return "not recorded"
    if isinstance(load, list):
        return ", ".join(f"{x:.2f}" for x in load) + " (1, 5, 15 min)"
    return str(load)


def _cell(text) -> str:
    return str(text).replace("|", "\\|").replace("\n", " ")


def run_markdown(run: dict) -> str:
    """One run: a heading line, its circumstances, the figures table and the ratios table."""
    who = "recorded by hand" if run.get("recorded") == "by hand" else "written by the script"
    tiny = " (tiny size: the figures mean nothing)" if run.get("tiny") else ""
    load = run.get("load_average") or {}
    lines = [
        f"**{run.get('date', 'undated')}**, {who}{tiny}. Commit {run.get('commit', 'not recorded')}, "
        f"Python {run.get('python', 'not recorded')}, {(run.get('machine') or {}).get('cpus', '?')} CPUs; "
        f"load average before: {load_text(load.get('before'))}, after: {load_text(load.get('after'))}.",
        "",
    ]
    sizes = run.get("sizes") or {}
    if sizes:
        lines += ["Sizes: " + "; ".join(f"{_cell(k)} {number_text(v)}" for k, v in sizes.items()) + ".", ""]
    lines += ["| measure | value | unit | goal | of the goal |", "|---|---:|---|---:|---:|"]
    for f in run.get("figures", []):
        value, goal = f.get("value"), f.get("goal")
        share = (
            f"{value / goal:.2f} x"
            if isinstance(value, (int, float)) and isinstance(goal, (int, float)) and goal
            else "-"
        )
        lines.append(
            f"| {_cell(f['measure'])} | {_cell(number_text(value))} | {_cell(f.get('unit', ''))} "
            f"| {_cell(number_text(goal))} | {share} |"
        )
    lines.append("")
    if run.get("ratios"):
        lines += ["| ratio | value | against, same run |", "|---|---:|---|"]
        for r in run["ratios"]:
            lines.append(f"| {_cell(r['measure'])} | {_cell(number_text(r['value']))} | {_cell(r['against'])} |")
        lines.append("")
    notes = [n for n in run.get("notes", []) if n]
    if notes:
        lines += ["Notes: " + "; ".join(_cell(n) for n in notes) + ".", ""]
    return "\n".join(lines)


def results_markdown(name: str, folder: Path = RESULTS) -> str:
    """Every recorded run of benchmark ``name``, newest first, or a line saying there is none."""
    path = folder / f"{name}.json"
    if not path.exists():
        return f"No run of `{name}.py` is recorded yet."
    doc = json.loads(path.read_text(encoding="utf-8"))
    runs = doc.get("runs", [])
    if not runs:
        return f"No run of `{name}.py` is recorded yet."
    parts = [f"{len(runs)} recorded run(s), newest first (`benchmarks/results/{name}.json`).", ""]
    parts += [run_markdown(run) for run in runs]
    return "\n".join(parts)


def render(markdown: str, folder: Path = RESULTS) -> str:
    """The page with each marker line replaced by that benchmark's runs."""
    return MARKER.sub(lambda m: results_markdown(m.group(1), folder), markdown)


def on_page_markdown(markdown, page, config, files):  # noqa: ARG001  (MkDocs hook signature)
    """MkDocs hook: render the benchmarks page's markers; other pages pass unchanged."""
    if page.file.src_uri != PAGE:
        return markdown
    return render(markdown)
