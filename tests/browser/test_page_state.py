"""A page's inputs and uploads kept for the session, and laptop first, in a real browser at 1366 x 768."""

from __future__ import annotations

import pytest

from tests.browser.actions import (
    field,
    go,
    metric_text,
    open_app,
    set_year_maintenance_flow,
    shot,
    wait_idle,
    wait_metric_change,
)
from tests.helpers import ROOT

pytestmark = pytest.mark.browser
BIRCH = ROOT / "demo_data" / "records" / "fernhollow_birch_cases.csv"


def choose(pg, label: str, option: str) -> None:
    """Pick ``option`` in the select box ``label``, scrolled to first (a click that scrolls may close the list)."""
    box = pg.locator('[data-testid="stSelectbox"]').filter(has_text=label).first
    box.scroll_into_view_if_needed()
    pg.wait_for_timeout(300)
    for _attempt in range(3):
        box.click()
        try:
            pg.get_by_role("option", name=option, exact=True).click(timeout=5000)
            break
        except Exception:
            pg.keyboard.press("Escape")
    else:
        raise AssertionError(f"{option!r} could not be chosen in {label!r}")
    wait_idle(pg)


def test_department_year_practice_edits_survive_a_change_of_scenario(laptop, app_url):
    pg = laptop
    open_app(pg, app_url)
    go(pg, "Department year", "Bottles bought per month")
    as_saved = metric_text(pg, "Cost")
    set_year_maintenance_flow(pg, "0.8")
    cost = wait_metric_change(pg, "Cost", as_saved)
    choose(pg, "Scenario", "Fernhollow proposal: sevoflurane instead of desflurane")
    pg.get_by_text("Kept for this session, not saved").first.wait_for()
    pg.evaluate("window.scrollTo(0, 0)")
    shot(pg, "state_year_other_scenario")
    choose(pg, "Scenario", "Fernhollow baseline: 2 L/min maintenance")
    pg.get_by_text("Edited on this page, not saved").first.wait_for()
    shot(pg, "state_year_back")
    pg.get_by_text("Practice change and uncertainty").first.click()
    wait_idle(pg)
    assert field(pg, "Maintenance flow (L/min)").input_value() == "0.80"
    assert metric_text(pg, "Cost") == cost


def _headline(pg) -> str:
    return pg.locator('[data-testid="stHeadingWithActionElements"] h4').first.inner_text()


def test_emissions_report_settings_survive_a_visit_to_another_page(laptop, app_url):
    pg = laptop
    open_app(pg, app_url)
    go(pg, "Emissions report", "What drove the change")
    first = _headline(pg)
    choose(pg, "Reporting period", "Quarter")
    choose(pg, "Quarter", "Q2")
    pct = field(pg, "Reduction a year [%]")
    pct.fill("10")
    pct.press("Enter")
    wait_idle(pg)
    # The headline is redrawn once the rerun with the new target has reached it.
    pg.wait_for_function(
        "() => (document.querySelector('[data-testid=\"stHeadingWithActionElements\"] h4') || {}).innerText"
        "?.includes('-10 %')",
        timeout=90_000,
    )
    headline = _headline(pg)
    assert headline != first and "quarter 2" in headline and "-10 %" in headline
    go(pg, "Reference", "Your values")
    go(pg, "Emissions report", "What drove the change")
    shot(pg, "state_report_back")
    assert _headline(pg) == headline
    assert field(pg, "Reduction a year [%]").input_value() == "10.00"
    assert "quarter 2" in _headline(pg)  # the period chosen, not the calendar year again


def test_records_uploaded_on_the_record_audit_stay_and_serve_the_emissions_report(laptop, app_url):
    pg = laptop
    open_app(pg, app_url)
    go(pg, "Record audit", "Per case")
    pg.get_by_text("Upload files").first.click()
    wait_idle(pg)
    pg.locator('[data-testid="stFileUploaderDropzoneInput"]').first.set_input_files(str(BIRCH))
    pg.locator('[data-testid="stMetric"]').filter(has_text="Rows set aside").first.wait_for()
    wait_idle(pg)
    cases = metric_text(pg, "Cases")
    go(pg, "Reference", "Your values")
    go(pg, "Record audit", "Per case")
    pg.get_by_text("kept for this session").first.wait_for()
    shot(pg, "state_audit_back")
    assert metric_text(pg, "Cases") == cases
    go(pg, "Emissions report", "What drove the change")
    assert metric_text(pg, "Cases") == cases
    # The uploaders fold away with the records kept: the headline stays on the first screen.
    box = pg.locator('[data-testid="stMetric"]').filter(has_text="Use-based, IPCC AR6 GWP100").first.bounding_box()
    assert box and box["y"] + box["height"] <= 768, box
    shot(pg, "state_report_shared_records")
    pg.get_by_text("Record, purchases and site files").first.click()
    pg.get_by_text("kept for this session").first.wait_for()


@pytest.mark.parametrize(
    ("title", "marker", "labels"),
    [
        ("Department year", "Charts of the year", ("Cost", "Emissions (t CO2e)")),
        ("Emissions report", "What drove the change", ("Use-based, IPCC AR6 GWP100", "Purchase-based")),
    ],
)
def test_the_first_laptop_screen_shows_the_headline_results(laptop, app_url, title, marker, labels):
    """Laptop first: at 1366 x 768 the page's headline figures are on the first screen, unscrolled."""
    pg = laptop
    open_app(pg, app_url)
    go(pg, title, marker)
    pg.evaluate("window.scrollTo(0, 0)")
    pg.locator('[data-testid="stMain"]').evaluate("m => m.scrollTo(0, 0)")
    wait_idle(pg)
    shot(pg, f"state_first_screen_{title.lower().replace(' ', '_')}")
    for label in labels:
        box = pg.locator('[data-testid="stMetric"]').filter(has_text=label).first.bounding_box()
        assert box and box["y"] >= 0 and box["y"] + box["height"] <= 768, (label, box)


OVERFLOW = """() => [...document.querySelectorAll('[data-testid="stDataFrame"] .dvn-scroller')]
  .filter(s => s.offsetParent !== null).map(s => s.scrollWidth - s.clientWidth)"""


def test_compare_tables_fit_a_laptop_without_scrolling_sideways(laptop, app_url):
    """Laptop first: the side-by-side and the year comparison tables show every column at 1366 px."""
    pg = laptop
    open_app(pg, app_url)
    go(pg, "Compare", "Against the baseline")
    pg.locator('[data-testid="stDataFrame"]').first.scroll_into_view_if_needed()
    pg.wait_for_timeout(1000)
    shot(pg, "state_compare_side_by_side")
    assert all(0 <= o <= 1 for o in pg.evaluate(OVERFLOW)), pg.evaluate(OVERFLOW)
    pg.get_by_role("tab", name="Year scenarios").click()
    wait_idle(pg)
    pg.locator('[data-testid="stDataFrame"]').last.scroll_into_view_if_needed()
    pg.wait_for_timeout(1000)
    shot(pg, "state_compare_year")
    widths = pg.evaluate(OVERFLOW)
    assert widths and all(0 <= o <= 1 for o in widths), widths
