"""Pages name files as the user knows them, never by their place on the server.

Defect 14 of issue 12: a message on a page named the server's own file path.
"""

from __future__ import annotations

import sqlite3
import tempfile
from pathlib import Path

import pytest
from streamlit.testing.v1 import AppTest

from tests.helpers import ROOT
from tests.helpers.pages import TIMEOUT, page
from ui.tables import plain_paths

PAGES = ("case_plan.py", "compare.py", "department_year.py", "record_audit.py", "reference.py")


def _shown_text(at: AppTest) -> list[str]:
    out = []
    for kind in ("markdown", "caption", "error", "warning", "info", "success", "exception"):
        out += [str(getattr(e, "value", getattr(e, "message", ""))) for e in at.get(kind)]
    out += [f"{m.label} {m.value} {m.help or ''}" for m in at.metric]
    for df in at.dataframe:
        v = df.value
        out += [str(c) for c in v.columns]
        for col in v.columns:
            if v[col].dtype == object or pd_is_string(v[col]):
                out += [str(x) for x in v[col].head(200)]
    return out


def pd_is_string(s) -> bool:
    import pandas as pd

    return pd.api.types.is_string_dtype(s)


def _server_places(store: Path) -> list[str]:
    return [str(ROOT), str(store.parent), tempfile.gettempdir() + "/", str(Path.home()) + "/"]


@pytest.mark.parametrize("name", PAGES)
def test_no_page_shows_a_server_path(name, isolated_store):
    """Defect 14: the sidebar named the store by its full server path; nothing on a page may."""
    at = page(name)
    places = _server_places(isolated_store)
    leaks = [t for t in _shown_text(at) for p in places if p.replace("/", "") and p in t.replace("\\", "")]
    assert not leaks, leaks
    # The store is named by its file name only.
    assert any(isolated_store.name.replace(".", "\\.") in c.value for c in at.caption)


def test_a_store_file_that_cannot_be_used_is_named_without_its_folder(isolated_store):
    """Defect 14: the store's refusal names the file, not where it sits on the server."""
    con = sqlite3.connect(isolated_store)
    con.execute("CREATE TABLE other_program (x)")
    con.commit()
    con.close()
    at = AppTest.from_file(str(ROOT / "pages" / "case_plan.py"), default_timeout=TIMEOUT)
    at.run()
    assert not at.exception
    message = " ".join(e.value for e in at.error)
    assert "store\\.sqlite3" in message and "another program" in message
    assert str(isolated_store.parent).replace("/", "") not in message.replace("\\", "").replace("/", "")


def test_an_upload_with_a_long_name_is_named_whole_in_its_message():
    """Defect 14: a long upload name must not come back as the end of a temporary path."""
    at = page("record_audit.py")
    at.radio(key="ra_source").set_value("Upload files").run()
    name = "theatre_export_" + "x" * 70 + ".csv"
    at.get("file_uploader")[0].upload(name, b"case_id,elapsed,agent\nA,0,sevo\n").run()
    assert not at.exception, [e.message for e in at.exception]
    message = " ".join(e.value for e in at.error)
    assert "missing required column" in message
    assert "/tmp" not in message and "gas\\-ledger\\-audit" not in message


def test_plain_paths_keeps_the_users_name_and_cuts_other_server_folders():
    tmp = tempfile.gettempdir()
    known = {f"{tmp}/gas-ledger-audit-abc/000-export.csv": "export.csv"}
    assert plain_paths(f"{tmp}/gas-ledger-audit-abc/000-export.csv: line 3: bad", known) == "export.csv: line 3: bad"
    assert plain_paths("...ger-audit-abc/000-export.csv: line 3", known) == "export.csv: line 3"
    assert plain_paths(f"{ROOT}/demo_data/year/fernhollow_casemix.csv: line 7") == "fernhollow_casemix.csv: line 7"
    assert plain_paths("plan 'a/b' at 2 L/min") == "plan 'a/b' at 2 L/min"
