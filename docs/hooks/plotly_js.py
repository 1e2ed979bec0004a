"""MkDocs hook: plotly.js for the validation page's figures, from the installed plotly package.

Declared in mkdocs.yml (``hooks:``). docs/validation.md loads ``js/plotly.min.js``; the file
is the copy that ships inside the plotly package (a dependency of the project), added to the
built site at build time. Nothing is committed to the repository and nothing is fetched.
"""

from __future__ import annotations

from pathlib import Path

from mkdocs.structure.files import File

TARGET = "js/plotly.min.js"


def plotly_js_path() -> Path:
    """Where the installed plotly package keeps its minified plotly.js."""
    import plotly

    return Path(plotly.__file__).resolve().parent / "package_data" / "plotly.min.js"


def on_files(files, config):
    """Add the installed plotly.js to the site's files, as ``js/plotly.min.js``."""
    files.append(File.generated(config, TARGET, abs_src_path=str(plotly_js_path())))
    return files
