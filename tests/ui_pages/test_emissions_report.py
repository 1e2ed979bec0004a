"""AppTest of the Emissions report page."""

from __future__ import annotations

import json

import pytest
from streamlit.testing.v1 import AppTest

from model.audit.engine import audit_records
from model.report import build_report, parse_period
from tests.helpers import ROOT
from tests.helpers.pages import page

DEMO = ROOT / "demo_data" / "records"


def _metric(at: AppTest, label: str) -> str:
    return next(m.value for m in at.metric if m.label == label)


@pytest.fixture(scope="module")
def expected():
    cases = audit_records([DEMO / "fernhollow_2025.parquet", DEMO / "fernhollow_2026.parquet"]).cases
    return build_report(cases, parse_period("2026"), parse_period("2025"))


def test_demo_report_renders_with_headline_change_and_target(expected):
    at = page("emissions_report.py")
    assert at.title[0].value == "Emissions report"
    # The page's headline figure equals the model's for the same demo files and periods.
    assert _metric(at, "Use-based, IPCC AR6 GWP100") == f"{expected.period.co2e_t:,.1f} t CO2e"
    assert any("calendar year 2026" in m.value and "down" in m.value for m in at.markdown)
    assert len(at.success) == 1 and "on track" in at.success[0].value
    assert len(at.get("plotly_chart")) >= 5
    assert "Purchase-based" in [m.label for m in at.metric]
    assert _metric(at, "Cases") == f"{expected.period.figures['cases']:,}"
    assert not at.error


def test_a_later_baseline_year_changes_the_comparison_and_an_unknown_year_is_one_message(expected):
    at = page("emissions_report.py")
    at.number_input(key="er_baseline_year").set_value(2019).run()
    assert not at.exception
    errors = [e.value.replace("\\", "") for e in at.error]  # shown through ui.md (escaped)
    assert len(errors) == 1 and "Baseline period: got '2019'" in errors[0] and "2025-01-01" in errors[0]
    # Nothing computed is lost: the period's figures stay.
    assert _metric(at, "Use-based, IPCC AR6 GWP100") == f"{expected.period.co2e_t:,.1f} t CO2e"


def test_a_period_written_wrong_is_one_message():
    at = page("emissions_report.py")
    at.selectbox(key="er_period_kind").set_value("As written").run()
    at.text_input(key="er_period_text").set_value("2026H1").run()
    assert not at.exception
    shown = [e.value.replace("\\", "") for e in at.error]
    assert len(shown) == 1 and shown[0].startswith("Reporting period: got '2026H1'") and "FY2026-04" in shown[0]


def test_financial_year_and_quarter_widgets_make_our_period_syntax():
    at = page("emissions_report.py")
    at.selectbox(key="er_period_kind").set_value("Quarter").run()
    at.selectbox(key="er_period_q").set_value(2).run()
    assert not at.exception
    assert any("2026 quarter 2" in m.value for m in at.markdown)
    at.selectbox(key="er_period_kind").set_value("Financial year").run()
    at.number_input(key="er_period_year").set_value(2025).run()
    assert not at.exception
    assert any("financial year April 2025 to March 2026" in m.value for m in at.markdown)


def test_upload_without_files_asks_for_records_and_no_baseline_hides_the_change():
    at = page("emissions_report.py")
    at.checkbox(key="er_use_baseline").uncheck().run()
    assert not at.exception
    assert any("Choose a baseline period" in c.value for c in at.caption)
    assert not at.success and not at.error
    at.radio(key="er_source").set_value("Upload files").run()
    assert not at.exception
    assert any("Upload record files" in i.value for i in at.info)


def test_the_command_line_html_has_the_charts_the_page_draws(tmp_path, capsys):
    """One set of figure builders for the page and ``gas-ledger report --html``.

    The page's and the command's are the same functions, and for the page's default
    choices (demo records, purchases and sites, 2026 against 2025, -5 %/year) the HTML file
    holds one chart for each chart on the page, with the same titles.
    """
    import model.present.report_charts
    from model.cli import main

    assert model.present.report_charts.report_figures is model.present.report_charts.report_figures
    at = page("emissions_report.py")
    titles = [json.loads(c.proto.spec)["layout"]["title"]["text"] for c in at.get("plotly_chart")]
    assert len(titles) >= 5 and "What drove the change (additive LMDI-I)" in titles
    out = tmp_path / "r.html"
    code = main(
        [
            "report",
            str(DEMO / "fernhollow_2025.parquet"),
            str(DEMO / "fernhollow_2026.parquet"),
            "--purchases",
            str(DEMO / "fernhollow_purchases_2025.csv"),
            "--purchases",
            str(DEMO / "fernhollow_purchases_2026.csv"),
            "--sites",
            str(DEMO / "fernhollow_sites.csv"),
            "--period",
            "2026",
            "--baseline",
            "2025",
            "--target",
            "-5%/year",
            "--html",
            str(out),
        ]
    )
    capsys.readouterr()
    assert code == 0
    html = out.read_text(encoding="utf-8")
    assert html.count('class="plotly-graph-div"') == len(titles)
    for title in titles:
        assert json.dumps(title)[1:-1] in html, title


@pytest.fixture(scope="module")
def expected_by_site():
    """The model's report for the page's default choices: demo records, purchases and sites, 2026 against 2025."""
    import pandas as pd

    from model.io.purchases import load_purchases
    from model.io.sites import read_sites

    cases = audit_records([DEMO / "fernhollow_2025.parquet", DEMO / "fernhollow_2026.parquet"]).cases
    bought = pd.concat(
        [load_purchases(DEMO / f"fernhollow_purchases_{y}.csv").table for y in (2025, 2026)], ignore_index=True
    )
    sites = read_sites(DEMO / "fernhollow_sites.csv")
    return lambda chosen=(): build_report(
        cases, parse_period("2026"), parse_period("2025"), purchases=bought, sites=sites, chosen_sites=chosen
    )


def _site_table(at: AppTest):
    found = [d for d in at.dataframe if "purchase_based_t_co2e" in d.value.columns]
    assert len(found) == 1
    return found[0]


def test_the_demo_report_sets_use_and_purchases_side_by_side_by_site(expected_by_site):
    at = page("emissions_report.py")
    element = _site_table(at)
    got = element.value.set_index("site")
    want = expected_by_site().period.use_vs_purchase_by_site.set_index("site")
    # The demo's three sites, and the oxygen bought for the whole hospital shown as bought for no site.
    assert list(got.index) == list(want.index) == ["Day surgery unit", "East wing", "Main theatres", "no site"]
    for col in ("use_based_t_co2e", "purchase_based_t_co2e", "gap_t_co2e"):
        assert got[col].tolist() == pytest.approx(want[col].tolist(), abs=1e-9), col
    assert got.loc["no site", "note"] == "purchases with no site"
    # Each column is labelled with its basis, and the caption beside it names the GWP source.
    config = element.proto.columns
    assert "Use-based t CO2e" in config and "Purchase-based t CO2e" in config
    assert any("Totals over the rows" in c.value and "IPCC AR6 GWP100" in c.value for c in at.caption)
    # One site chosen: its purchases only, and the page says so.
    at.multiselect(key="er_sites").set_value(["East wing"]).run()
    assert not at.exception
    one = _site_table(at).value.set_index("site")
    assert list(one.index) == ["East wing"]
    assert one.loc["East wing", "purchase_based_t_co2e"] == pytest.approx(
        want.loc["East wing", "purchase_based_t_co2e"], abs=1e-9
    )
    assert _metric(at, "Purchase-based") == (
        f"{expected_by_site(('East wing',)).period.purchases.co2e_t('t CO2e (IPCC AR6 GWP100)'):,.1f} t CO2e"
    )
    assert any("chosen sites' purchases only (East wing)" in c.value.replace("\\", "") for c in at.caption)


def test_report_tables_on_the_page_have_headings_in_words():
    # Defect 7 of the dashboard issue: no snake_case column names on pages.
    import re

    at = page("emissions_report.py")
    assert not at.exception
    snake = re.compile(r"^[a-z0-9]+(_[a-z0-9]+)+$")
    import json

    seen = 0
    for df in at.dataframe:
        config = json.loads(df.proto.columns or "{}")  # headings a column_config gives in words
        labelled = {name for name, c in config.items() if isinstance(c, dict) and c.get("label")}
        names = [c for c in df.value.columns if snake.match(str(c)) and str(c) not in labelled]
        assert names == [], names
        seen += 1
    assert seen >= 3


def test_an_unknown_time_zone_shows_a_message_and_no_exception():
    at = page("emissions_report.py")
    at.text_input(key="er_time_zone").set_value("Mars/Base").run()
    assert not at.exception
    assert any("time zone" in e.value and "Mars/Base" in e.value for e in at.error)
    at.text_input(key="er_time_zone").set_value("Europe/London").run()
    assert not at.exception and not at.error


def test_a_baseline_under_another_gwp_source_shows_the_like_for_like_change_first():
    """The headline and the headline figure's change hold the GWP source fixed; the source effect beside."""
    from tests.helpers.pages import run

    at = page("emissions_report.py")
    at.selectbox(key="er_baseline_gwp").select("ar5_gwp100")
    run(at)
    cases = audit_records([DEMO / "fernhollow_2025.parquet", DEMO / "fernhollow_2026.parquet"]).cases
    r = build_report(
        cases, parse_period("2026"), parse_period("2025"), gwp_source="ar6_gwp100", baseline_gwp_source="ar5_gwp100"
    )
    like = r.baseline.figures["co2e_t"]["ar6_gwp100"]
    head = next(m.value for m in at.markdown if "calendar year 2026" in m.value)
    assert "like for like" in head and head.index("like for like") < head.index("change of GWP source")
    delta = next(m for m in at.metric if m.label == "Use-based, IPCC AR6 GWP100").proto.delta
    assert delta == f"{r.period.co2e_t - like:+,.1f} t on the baseline, like for like"
