"""AppTest of the Record audit page."""

from __future__ import annotations

from streamlit.testing.v1 import AppTest

from model.audit.engine import audit_records
from tests.helpers import ROOT
from tests.helpers.pages import TIMEOUT, page, run

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


def test_a_few_records_against_a_year_of_purchases_report_coverage_not_a_loss():
    """Defect 13: the Birch cases alone against the hospital's purchases: coverage, no N2O loss figure."""
    at = page("record_audit.py")
    birch = next(o for o in at.multiselect(key="ra_demo").options if "Birch" in o)
    at.multiselect(key="ra_demo").set_value([birch])
    run(at)
    shown = " ".join(w.value for w in at.warning).replace("\\", "")
    assert "1 theatre(s) (Birch)" in shown and "not losses" in shown
    assert next(m.value for m in at.metric if m.label == "N2O apparent loss") == "not estimated"
    # The coverage table is shown with readable headings ("case records" for has_records).
    coverage = next(d.value for d in at.dataframe if "case records" in d.value.columns)
    assert not coverage["case records"].all() and coverage["theatres"].max() == 1
    # All demo records together cover the year: the N2O gap is shown as a loss again.
    at.multiselect(key="ra_demo").set_value(at.multiselect(key="ra_demo").options)
    run(at)
    assert next(m.value for m in at.metric if m.label == "N2O apparent loss").endswith(" L")


def test_record_audit_co2e_in_tonnes_keeps_its_decimals():
    at = AppTest.from_file(str(ROOT / "pages" / "record_audit.py"), default_timeout=TIMEOUT)
    at.run()
    birch = next(o for o in at.multiselect(key="ra_demo").options if "Birch" in o)
    at.multiselect(key="ra_demo").set_value([birch]).run()
    at.selectbox(key="gl_co2e_unit").select("t CO2e").run()
    assert not at.exception, [e.message for e in at.exception]
    m = next(m for m in at.metric if m.label == "CO2e (t CO2e)")
    # The metric must agree with its own help text (the same total, 1.18 t for the demo), not round to 1.
    assert m.value == m.help.split()[0]
    assert "." in m.value


def test_record_audit_offers_an_html_report_like_every_results_view():
    at = page("record_audit.py")
    labels = [d.proto.label for d in at.get("download_button")]
    assert labels == ["CSV", "Excel", "HTML report"]


def test_a_bad_purchase_line_is_shown_set_aside_and_the_rest_reconciled():
    at = page("record_audit.py")
    at.radio(key="ra_source").set_value("Upload files").run()
    birch = (ROOT / "demo_data" / "records" / "fernhollow_birch_cases.csv").read_bytes()
    at.get("file_uploader")[0].upload("birch.csv", birch).run()
    at.get("file_uploader")[1].upload(
        "bought.csv", b"month,item,quantity,unit,size\n2025-09,N2O,1,cylinder,\n2025-09,N2O,2,cylinder,9000 L\n"
    ).run()
    assert not at.exception, [e.message for e in at.exception]
    warning = " ".join(w.value for w in at.warning)
    assert "1 purchase line(s) set aside" in warning
    assert "bought\\.csv, line 2\\: size" in warning and "/tmp" not in warning
    # The good line is reconciled: 2 cylinders of 9000 L (arithmetic).
    recon = next(df.value for df in at.dataframe if "apparent loss" in df.value.columns)
    total = recon[(recon["item"] == "nitrous oxide") & (recon["month"] == "all")]
    assert float(total["purchased"].iloc[0]) == 18000.0


def test_an_unknown_time_zone_shows_a_message_and_a_known_one_audits():
    at = _run()
    at.text_input(key="ra_time_zone").set_value("Mars/Base").run(timeout=TIMEOUT)
    assert not at.exception
    assert any("time zone" in e.value for e in at.error)
    at.text_input(key="ra_time_zone").set_value("Europe/London").run(timeout=TIMEOUT)
    assert not at.exception and not at.error
    assert int(_metric(at, "Cases").replace(",", "")) > 0


def test_the_page_and_the_command_line_reconcile_the_same_purchases_in_the_same_words(capsys):
    """The page's N2O apparent loss and coverage are the command line's, for the same files."""
    import json

    from tests.helpers.cli import run as cli

    at = _run()
    files = [DEMO / "fernhollow_2025.parquet", DEMO / "fernhollow_2026.parquet", DEMO / "fernhollow_birch_cases.csv"]
    purchases = [DEMO / "fernhollow_purchases_2025.csv", DEMO / "fernhollow_purchases_2026.csv"]
    status, out, err = cli(
        ["audit", *files, "--purchases", purchases[0], "--purchases", purchases[1], "--json"], capsys
    )
    assert status == 0, err
    data = json.loads(out)
    assert _metric(at, "N2O apparent loss") == data["n2o_apparent_loss"]["figure"]
    shown = " ".join(c.value for c in at.caption) + " ".join(w.value for w in at.warning)
    assert data["record_coverage"]["message"].split(";")[0] in shown.replace("\\", "")
