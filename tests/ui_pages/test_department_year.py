"""AppTest of the Department year page and the year tab of the Compare page."""

from __future__ import annotations

from pagetest import ROOT, isolated_store, page  # noqa: F401  (isolated_store: autouse fixture)
from streamlit.testing.v1 import AppTest

_page = page


def _metric(at: AppTest, label: str) -> float:
    return float(next(m.value for m in at.metric if m.label == label).replace(",", ""))


def _edit(at: AppTest, row: int, **cells) -> None:
    key = next(d.key for d in at.data_editor if d.key and d.key.startswith("dy_mix_"))
    at.session_state[key] = {"edited_rows": {row: cells}, "added_rows": [], "deleted_rows": []}
    at.run()
    assert not at.exception, [e.message for e in at.exception]


def test_page_renders_the_demo_year_with_caution_and_bands():
    at = _page("department_year.py")
    assert _metric(at, "Cost (GBP)") > 0
    assert _metric(at, "Emissions (t CO2e)") > 0
    assert any("P5-P95" in c.value for c in at.caption)
    assert any("not a prescription" in i.value for i in at.info)
    assert not at.error


def test_more_cases_in_the_table_raise_cost():
    at = _page("department_year.py")
    before = _metric(at, "Cost (GBP)")
    _edit(at, 0, cases_per_year=5000)
    assert _metric(at, "Cost (GBP)") > before


def test_bad_table_entry_shows_one_line_and_keeps_the_table():
    at = _page("department_year.py")
    _edit(at, 0, median_duration=5)
    # The message may be shown with markdown escapes (e.g. "median\\_duration").
    assert at.error and "row 1, median_duration" in at.error[0].value.replace("\\", "")
    assert len(at.data_editor) == 1


def test_low_flow_proposal_costs_less_than_baseline():
    at = _page("department_year.py")
    baseline = _metric(at, "Cost (GBP)")
    at.selectbox(key="dy_scenario").select("Fernhollow proposal: 0.5 L/min maintenance")
    at.run()
    assert not at.exception
    assert _metric(at, "Cost (GBP)") < baseline
    assert any(w for w in at.warning if "sevoflurane minimum" in w.value)


def test_compare_page_year_tab_shows_paired_difference():
    at = _page("compare.py")
    labels = [m.label for m in at.metric]
    assert "Change in cost" in labels
    value = next(m.value for m in at.metric if m.label == "Change in cost")
    assert value.startswith("-")  # the demo proposal saves money
