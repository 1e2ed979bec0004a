"""Laptop first: wide tables stay usable on a 1366 px screen.

Defect 16 of issue 12: wide tables hid their columns; the key figures of a record audit's
38-column case table sat far to the right.
"""

from __future__ import annotations

import json

from tests.helpers.pages import page


def _config(df) -> dict:
    return json.loads(df.proto.columns or "{}")


def test_wide_audit_tables_lead_with_the_key_figures_and_pin_their_first_column():
    """Defect 16: the case table starts with case, agent, theatre, month and the figures.

    It keeps the case pinned while scrolled sideways.
    """
    at = page("record_audit.py")
    cases = next(df for df in at.dataframe if "case" in df.value.columns and "start" in df.value.columns)
    assert list(cases.value.columns[:4]) == ["case", "agent", "theatre", "month"]
    assert "CO2e, total (kg)" in list(cases.value.columns[:9])
    assert _config(cases).get("case", {}).get("pinned") is True


def test_case_plan_headline_results_are_drawn_before_the_phases_table_beside_it():
    """Defect 16: the headline figures are in a column beside the inputs, not below them."""
    at = page("case_plan.py")
    blocks = list(at.main.children.values())
    # The first block after the title, intro and caution is the row of the two columns.
    row = next(b for b in blocks if b.type == "flex_container")
    assert len(row.children) == 2
    left, right = row.children[0], row.children[1]
    assert [m.label for m in right.get("metric")][:1] == ["Liquid agent"]
    assert len(left.get("arrow_data_frame") or left.dataframe) == 1  # the phases table
    assert not left.get("metric")


def test_record_problems_show_their_message_before_the_columns_that_may_be_wide():
    """Defect 16 (and 7): a set-aside row's message sits beside its line and problem.

    Not past a wide value column where a laptop screen cuts it off.
    """
    at = page("record_audit.py")
    issues = next(df.value for df in at.dataframe if "message" in df.value.columns)
    assert list(issues.columns[:3]) == ["line or row", "problem", "message"]


def _walk(node):
    """Every element under ``node`` in page order (AppTest's tree, depth first)."""
    for child in getattr(node, "children", {}).values():
        yield child
        yield from _walk(child)


def test_department_year_headline_figures_come_before_the_case_mix_table():
    """Laptop first: the year's cost and emissions are on the first screen, above the inputs that make them."""
    at = page("department_year.py")
    order = [e.label if e.type == "metric" else e.type for e in _walk(at.main) if e.type in ("metric", "dataframe")]
    first_table = order.index("dataframe")  # the case-mix table
    assert {"Cost (GBP)", "Emissions (t CO2e)"} <= set(order[:first_table])


def test_compare_tables_show_one_column_per_plan_or_year_to_fit_a_laptop():
    """Laptop first: the Compare tables fit a 1366 px screen.

    The side-by-side table shows figure, unit and one column per plan (the differences on
    request), and each year comparison its own table without the year's name repeated in a
    column; the downloads keep every column.
    """
    at = page("compare.py")
    side = next(df for df in at.dataframe if "figure" in df.value.columns and "unit" in df.value.columns)
    plans = [c for c in side.value.columns if c not in ("figure", "unit", "safety")]
    assert len(plans) >= 2 and not any("difference" in c for c in plans)
    at.radio(key="cmp_side_by_side").set_value("Difference from the baseline").run()
    side = next(df for df in at.dataframe if "figure" in df.value.columns and "unit" in df.value.columns)
    assert len([c for c in side.value.columns if c not in ("figure", "unit", "safety")]) == len(plans) - 1
    years = [df.value for df in at.dataframe if "P5" in df.value.columns]
    assert years and not any("year compared" in t.columns for t in years)


#: The phases table's width beside the figures on a 1366 x 768 laptop [px]: the grid measured
#: 624 px wide in the browser (tests/browser/test_look.py's screen), less its 33 px row marker.
PHASES_WIDTH_PX = 590
#: A heading's width at the grid's font: 6.2 px a character, plus 24 px for the edit icon and
#: padding (measured on the 1366 px screenshot; an estimate, no source).
HEADING_PX_PER_CHAR, HEADING_EXTRA_PX = 6.2, 24


def test_the_phases_table_headings_fit_their_columns_and_the_columns_fit_a_laptop():
    """Laptop first: no heading of the phases editor is cut, and no column is pushed out of view."""
    at = page("case_plan.py")
    columns = {k: v for k, v in _config(at.data_editor[0]).items() if not v.get("hidden")}
    widths = {c["label"]: c.get("width") for c in columns.values()}
    assert all(isinstance(w, int) for w in widths.values()), widths
    assert sum(widths.values()) <= PHASES_WIDTH_PX, widths
    for label, width in widths.items():
        assert width >= len(label) * HEADING_PX_PER_CHAR + HEADING_EXTRA_PX, (label, width)
