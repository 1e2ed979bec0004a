"""AppTest of the Record audit page."""

from __future__ import annotations

from pagetest import ROOT, isolated_store, page  # noqa: F401  (isolated_store: autouse fixture)
from streamlit.testing.v1 import AppTest

from model.audit.engine import audit_records

DEMO = ROOT / "demo_data" / "records"


def _run() -> AppTest:
    return page("record_audit.py")


def _metric(at: AppTest, label: str) -> str:
    return next(m.value for m in at.metric if m.label == label)


def test_demo_audit_shows_cases_checks_and_reconciliation():
    at = _run()
    assert at.title[0].value == "Record audit"
    # The page tells the user to de-identify records before upload.
    assert any("de-identified" in w.value for w in at.warning)
    # The page's case count equals the model's for the same demo files.
    expected = audit_records(sorted(DEMO.glob("fernhollow_*.parquet")) + [DEMO / "fernhollow_birch_cases.csv"])
    assert int(_metric(at, "Cases").replace(",", "")) == int(expected.total["cases"])
    assert int(_metric(at, "Rows set aside").replace(",", "")) == expected.report.rows_set_aside > 0
    # Row-numbered messages of the deliberate problems are shown, with the uploaded file name.
    issues = next(df.value for df in at.dataframe if "message" in df.value.columns)
    assert set(issues["file"]) == {"fernhollow_birch_cases.csv"}
    assert (issues["line or row"] > 1).all()
    # Problems in words, and the message in full beside them.
    assert "text in a number column" in set(issues["problem"])
    assert any("expected a number" in m for m in issues["message"])
    assert "N2O apparent loss" in [m.label for m in at.metric]
    assert len(at.get("plotly_chart")) >= 4


def test_without_purchases_the_reconciliation_asks_for_a_file():
    at = _run()
    at.checkbox(key="ra_demo_purchases").uncheck().run()
    assert not at.exception
    assert "N2O apparent loss" not in [m.label for m in at.metric]
    assert any("Add a purchases file" in c.value for c in at.caption)


def test_no_files_chosen_shows_a_prompt_not_an_error():
    at = _run()
    at.multiselect(key="ra_demo").set_value([]).run()
    assert not at.exception
    assert any("Choose demo files" in i.value for i in at.info)
