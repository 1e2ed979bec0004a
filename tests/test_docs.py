"""The documentation site (docs/, mkdocs.yml).

It builds in strict mode, works offline, and its API pages list exactly each public package's ``__all__``.
"""

import importlib
import os
import re
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
DOCS = ROOT / "docs"
API_PAGES = {
    "model": "model.md",
    "model.io": "io.md",
    "model.year": "year.md",
    "model.audit": "audit.md",
    "model.report": "report.md",
    "model.trends": "trends.md",
    "model.stock": "stock.md",
    "model.present": "present.md",
    "model.store": "store.md",
    "model.cli": "cli.md",
}


def api_entries(page: Path) -> list[str]:
    """The objects of the ``::: name`` lines of an API page, in order."""
    return re.findall(r"(?m)^:::\s+(\S+)\s*$", page.read_text(encoding="utf-8"))


@pytest.mark.parametrize("package", API_PAGES)
def test_api_page_lists_exactly_the_names_in_all(package):
    entries = api_entries(DOCS / "api" / API_PAGES[package])
    module = importlib.import_module(package)
    assert len(entries) == len(set(entries)), "an object is listed twice"
    assert sorted(entries) == sorted(f"{package}.{name}" for name in module.__all__)


def test_every_api_page_is_in_the_navigation():
    config = (ROOT / "mkdocs.yml").read_text(encoding="utf-8")
    for page in API_PAGES.values():
        assert f"api/{page}" in config, page
    assert sorted(p.name for p in (DOCS / "api").glob("*.md")) == sorted(API_PAGES.values())


def test_methods_gwp_table_matches_the_reference_data():
    from model.reference import GWP_SOURCES

    text = (DOCS / "methods.md").read_text(encoding="utf-8")
    table = text.split("| agent | AR6 GWP100 | AR6 GWP20 | AR5 GWP100 | Sulbaek Andersen 2012 |", 1)[1]
    rows = {}
    for line in table.strip().splitlines()[1:]:
        if not line.startswith("|"):
            break
        cells = [c.strip() for c in line.strip("|").split("|")]
        rows[cells[0].replace(" ", "_")] = cells[1:]
    assert set(rows) == {"nitrous_oxide", "desflurane", "isoflurane", "sevoflurane", "halothane"}
    for agent, cells in rows.items():
        for cell, key in zip(cells, ("ar6_gwp100", "ar6_gwp20", "ar5_gwp100", "sulbaek_andersen_2012"), strict=False):
            value = GWP_SOURCES[key].values[agent].value
            assert (cell == "-") if value is None else float(cell) == pytest.approx(value), (agent, key)


def test_readme_points_at_pages_that_exist():
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    links = re.findall(r"\]\((docs/[^)#]+)", readme)
    assert {"docs/guide.md", "docs/formats.md", "docs/methods.md", "docs/validation.md"} <= set(links)
    for link in links:
        assert (ROOT / link).is_file(), link


@pytest.mark.slow
def test_site_builds_in_strict_mode_and_loads_nothing_from_the_network(tmp_path):
    site = tmp_path / "site"
    env = dict(os.environ, PYTHONPATH=str(ROOT), NO_MKDOCS_2_WARNING="1")
    proc = subprocess.run(
        [sys.executable, "-m", "mkdocs", "build", "--strict", "-d", str(site)],
        cwd=ROOT,
        env=env,
        capture_output=True,
        text=True,
        timeout=600,
    )
    assert proc.returncode == 0, proc.stdout + proc.stderr
    pages = {p.relative_to(site).as_posix() for p in site.rglob("*.html")}
    assert {"index.html", "guide.html", "formats.html", "methods.html", "validation.html"} <= pages
    assert {f"api/{name[:-3]}.html" for name in API_PAGES.values()} <= pages
    # Offline: no script, style sheet, font or image is fetched from another host.
    remote = re.compile(r"""(?:<script[^>]+src|<link[^>]+href|<img[^>]+src)=["']?(?:https?:)?//""", re.I)
    css_remote = re.compile(r"""(?:@import|url\()\s*["']?(?:https?:)?//""", re.I)
    for path in site.rglob("*"):
        if path.suffix in {".html", ".css"}:
            text = path.read_text(encoding="utf-8", errors="replace")
            assert not remote.search(text), path
            assert not css_remote.search(text), path
    # The validation page's figures load plotly.js from the site itself (docs/hooks/plotly_js.py).
    assert (site / "js" / "plotly.min.js").stat().st_size > 1_000_000
    assert 'src="js/plotly.min.js"' in (site / "validation.html").read_text(encoding="utf-8")
    # The API reference rendered the docstrings (a page of headings alone would pass the rest).
    model_page = (site / "api" / "model.html").read_text(encoding="utf-8")
    assert "Dion" in model_page and "Parameters" in model_page
