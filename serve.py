"""Fresh Gas Ledger dashboard with a warm start: ``streamlit run serve.py`` (scripts/dashboard.sh).

Serves the dashboard of ``app.py`` through Streamlit's ``st.App``; ``streamlit run app.py``
serves the same pages, only without the warm-up, and so does this file with a Streamlit that
has no ``st.App`` (the fallback: it then runs ``app.py`` as its page script). Streamlit runs ``app.py`` when a browser
session opens, so after a server start the first user would also wait for the imports of
every module the page uses (pandas, pint, pydantic, the model) and for the unit registry to
be built, about 1 s of CPU on a 2-core machine before the page itself. Here the server's
lifespan starts :func:`warm_up` in a background thread when the server starts: it imports
what ``app.py`` and its default page (Case plan, :data:`FIRST_PAGE`) import at their top,
read from the scripts themselves, and builds the unit registry. The server answers at once;
a session that opens during the warm-up waits only for the part not yet done (Python's
import lock), never does it twice. The warm-up changes nothing a user sees: no store is
opened and no cache filled.
"""

from __future__ import annotations

import ast
import runpy
import sys
import threading
import time
from contextlib import asynccontextmanager
from pathlib import Path

import streamlit as st

HERE = Path(__file__).resolve().parent
#: The scripts of the first page a user gets: the entry point and its default page.
FIRST_PAGE = (HERE / "app.py", HERE / "pages" / "case_plan.py")


def script_imports(path: Path) -> list[tuple[str, tuple[str, ...]]]:
    """``(module, names)`` of each top-level import statement of a script, in order.

    ``names`` is empty for ``import module``; ``from __future__`` is left out.
    """
    out = []
    for node in ast.parse(path.read_text(encoding="utf-8")).body:
        if isinstance(node, ast.Import):
            out += [(a.name, ()) for a in node.names]
        elif isinstance(node, ast.ImportFrom) and node.level == 0 and node.module != "__future__":
            out.append((node.module, tuple(a.name for a in node.names)))
    return out


def warm_up(scripts=FIRST_PAGE) -> float:
    """Import what ``scripts`` import, build the unit registry, load the audit's compiled loops.

    Returns the seconds of CPU it took.
    """
    start = time.thread_time()
    for path in scripts:
        for module, names in script_imports(path):
            # As the import statement does: loads a submodule named in ``names`` ("from ui
            # import charts") and a name the model packages load on first use.
            __import__(module, fromlist=names)
    from model.base.units import registry

    registry()
    # Last, the audit's compiled loops: the Record audit's first result then does not wait
    # for numba to load their machine code.
    from model.audit.kernel import load_kernels

    load_kernels()
    return time.thread_time() - start


def _warm_up_logged() -> None:
    try:
        seconds = warm_up()
    except Exception as exc:  # noqa: BLE001 - only a head start; a page reports a real error itself
        print(
            f"gas-ledger: warm-up stopped ({type(exc).__name__}: {exc}); pages load as usual",
            file=sys.stderr,
            flush=True,
        )
    else:
        print(f"gas-ledger: the first page's modules are loaded ({seconds:.1f} s CPU)", file=sys.stderr, flush=True)


@asynccontextmanager
async def _lifespan(_app):
    threading.Thread(target=_warm_up_logged, name="gas-ledger-warm-up", daemon=True).start()
    yield


if hasattr(st, "App"):
    app = st.App(HERE / "app.py", lifespan=_lifespan)
else:  # pragma: no cover - exercised by tests/ui_pages/test_speed.py with st.App removed
    # A Streamlit without ``st.App`` (it is new, and its interface may still change) runs this
    # file as a page script: serve the dashboard of app.py as it is, with no warm start.
    print("gas-ledger: this Streamlit has no st.App; serving app.py without a warm start", file=sys.stderr)
    runpy.run_path(str(HERE / "app.py"), run_name="__main__")
