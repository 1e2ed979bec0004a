"""Page inputs and uploads kept for the session (ui/state.py), run from the entry point as a user gets it.

Streamlit drops the value of every widget not drawn in a run, so without ``ui.state`` a page's
settings and uploads are gone after a visit to another page.
"""

from __future__ import annotations

import re

from streamlit.testing.v1 import AppTest

import ui.state
from tests.helpers import ROOT
from tests.helpers.pages import app, click, go, metric_value, run

DEMO = ROOT / "demo_data" / "records"
BIRCH = DEMO / "fernhollow_birch_cases.csv"
PURCHASES = DEMO / "fernhollow_purchases_2025.csv"


def _headline(at: AppTest) -> str:
    return next(m.value for m in at.markdown if m.value.startswith("#### "))


def test_emissions_report_period_and_reduction_survive_a_visit_to_another_page():
    at = app()
    go(at, "emissions_report.py")
    at.selectbox(key="er_period_kind").set_value("Quarter")
    run(at)
    at.selectbox(key="er_period_q").set_value(2)
    run(at)
    at.number_input(key="er_target_pct").set_value(10.0)
    run(at)
    headline, co2e = _headline(at), metric_value(at, "Use-based, IPCC AR6 GWP100")
    assert "quarter 2" in headline
    go(at, "reference.py")
    go(at, "emissions_report.py")
    assert at.selectbox(key="er_period_kind").value == "Quarter"
    assert at.selectbox(key="er_period_q").value == 2
    assert at.number_input(key="er_target_pct").value == 10.0
    # The same report, not silently another one.
    assert _headline(at) == headline
    assert metric_value(at, "Use-based, IPCC AR6 GWP100") == co2e


def _upload_on_record_audit(at: AppTest) -> AppTest:
    go(at, "record_audit.py")
    at.radio(key="ra_source").set_value("Upload files")
    run(at)
    at.file_uploader(key="ra_upload").upload(BIRCH.name, BIRCH.read_bytes(), "text/csv")
    at.file_uploader(key="ra_upload_purchases").upload(PURCHASES.name, PURCHASES.read_bytes(), "text/csv")
    return run(at)


def test_record_audit_uploads_survive_a_visit_and_the_emissions_report_shares_them():
    at = _upload_on_record_audit(app())
    cases = metric_value(at, "Cases")
    assert cases != "" and "N2O apparent loss" in [m.label for m in at.metric]
    go(at, "reference.py")
    go(at, "record_audit.py")
    # Back on the page: the same files, the same audit, and a word on where they are kept.
    assert at.radio(key="ra_source").value == "Upload files"
    assert metric_value(at, "Cases") == cases
    assert "N2O apparent loss" in [m.label for m in at.metric]
    kept = " ".join(c.value for c in at.caption).replace("\\", "")
    assert BIRCH.name in kept and PURCHASES.name in kept and "kept for this session" in kept
    # The Emissions report uses the same records and purchases without asking for them again.
    go(at, "emissions_report.py")
    assert at.radio(key="er_source").value == "Upload files"
    assert not any("Upload record files" in i.value for i in at.info)
    assert metric_value(at, "Cases") == cases
    assert "no purchases" not in [m.value for m in at.metric]


def test_forgetting_kept_files_asks_for_them_again_on_every_page():
    at = _upload_on_record_audit(app())
    go(at, "reference.py")
    go(at, "record_audit.py")
    click(at, "Forget these files")
    assert any("upload record files" in i.value.lower() for i in at.info)
    go(at, "emissions_report.py")
    assert at.radio(key="er_source").value.startswith("Demo")  # no kept records to start from
    at.radio(key="er_source").set_value("Upload files")
    run(at)
    assert any("Upload record files" in i.value for i in at.info)


def test_a_file_removed_from_the_uploader_is_no_longer_used():
    at = _upload_on_record_audit(app())
    at.file_uploader(key="ra_upload_purchases").clear()
    run(at)
    assert "N2O apparent loss" not in [m.label for m in at.metric]
    assert metric_value(at, "Cases") != ""


def test_every_widget_key_of_the_pages_is_one_the_session_keeps():
    # A page whose key prefix is not kept loses its inputs on a visit to another page (the
    # Emissions report's "er_" once did): every literal key in pages/ and ui/ must be covered.
    keys = set()
    for f in [*(ROOT / "pages").glob("*.py"), *(ROOT / "ui").glob("*.py")]:
        keys |= set(re.findall(r'key=f?"([a-z]+_)', f.read_text(encoding="utf-8")))
    assert keys and not {k for k in keys if not k.startswith(ui.state.PAGE_PREFIXES)}
