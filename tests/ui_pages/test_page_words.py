"""Pages point at the help they show, never at repository paths, and name fields in their own words."""

from __future__ import annotations

import pytest

from tests.helpers.pages import page


def _texts(at) -> list[str]:
    out = []
    for kind in ("markdown", "caption", "info", "warning", "error"):
        out += [e.value for e in getattr(at, kind)]
    out += [e.label for e in at.get("file_uploader")] if hasattr(at, "get") else []
    return out


@pytest.mark.parametrize("name", ["record_audit.py", "emissions_report.py", "case_plan.py"])
def test_no_page_points_at_a_repository_path_and_each_shows_the_formats_it_reads(name):
    at = page(name)
    texts = _texts(at)
    assert not any("docs/" in t for t in texts), [t for t in texts if "docs/" in t]
    assert any("File formats" in t for t in texts) or any(e.label == "File formats" for e in at.expander)


def test_a_message_from_the_model_points_at_the_page_help():
    from ui.tables import page_words

    text = page_words("missing required column(s): time (see docs/formats.md, 'Case records')")
    assert text == "missing required column(s): time (see 'Case records' under 'File formats' on this page)"
