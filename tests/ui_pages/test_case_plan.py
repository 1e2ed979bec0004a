"""The Case plan page (AppTest): its inputs, units, saving and importing, and the figures it shows.

Tests from issue 12 ("The dashboard a department can trust") name their defect in the
docstring. The app runs from its entry point (``app.py``, as a user gets it) wherever
moving between pages matters.
"""

from __future__ import annotations

import pytest
from streamlit.testing.v1 import AppTest

from model.store import Store
from tests.helpers import ROOT
from tests.helpers.pages import app, click, go, metric_value, page, run


def test_case_plan_inputs_survive_a_visit_to_another_page():
    """Defect 1: plan name, weight, age and the phases table survive Case plan -> Compare -> Case plan."""
    at = app()
    at.selectbox(key="cp_open_name").select("Laparoscopic cholecystectomy, high flow")
    run(at)
    click(at, "Open")
    at.text_input(key="cp_weight").input("90 kg")
    run(at)
    key = at.data_editor[0].key
    at.session_state[key] = {"edited_rows": {1: {"O2": "0.5 L/min"}}, "added_rows": [], "deleted_rows": []}
    run(at)
    liquid = metric_value(at, "Liquid agent")
    go(at, "compare.py")
    assert any(m.label == "Liquid agent" for m in at.metric)  # the Compare page ran
    go(at, "case_plan.py")
    assert at.text_input(key="cp_name").value == "Laparoscopic cholecystectomy, high flow"
    assert at.text_input(key="cp_weight").value == "90 kg"
    assert at.text_input(key="cp_age").value != ""
    assert at.data_editor[0].value["O2"].iloc[1] == "0.5 L/min"
    assert not at.error, [e.value for e in at.error]
    assert metric_value(at, "Liquid agent") == liquid
    save = next(b for b in at.button if b.label == "Save")
    assert not save.disabled
    # A sidebar change afterwards moves the figures, not a delta against stale ones.
    at.number_input(key="gl_temp").set_value(25.0)
    run(at)
    assert not at.error, [e.value for e in at.error]
    assert not any("last valid result" in w.value for w in at.warning)


def edit_phase(at: AppTest, row: int, **cells) -> AppTest:
    key = next(d.key for d in at.data_editor if d.key.startswith("cp_phases_"))
    at.session_state[key] = {"edited_rows": {row: cells}, "added_rows": [], "deleted_rows": []}
    return run(at)


def test_switching_a_phase_to_a_target_clears_the_dial_setting_and_says_so():
    """Defect 3: dial -> end-tidal target never reads the leftover "2 %" as 2 x MAC."""
    at = page("case_plan.py")
    at.selectbox(key="cp_open_name").select("Laparoscopic cholecystectomy, high flow")
    run(at)
    click(at, "Open")
    assert at.data_editor[0].value["setting"].iloc[1].endswith("%")
    edit_phase(at, 1, control="target")
    table = at.data_editor[0].value
    assert table["control"].iloc[1] == "target"
    assert table["setting"].iloc[1] is None or str(table["setting"].iloc[1]) in ("", "None", "nan")
    shown = " ".join(w.value for w in at.warning).replace("\\", "")
    assert "row 2: the control is now an end-tidal target" in shown and "cleared" in shown
    # The setting typed for the target is a MAC multiple; a percent there is refused by its cell.
    edit_phase(at, 1, setting="2 %")
    assert any("row 2, dial % or target" in e.value and "MAC multiple" in e.value for e in at.error), [
        e.value for e in at.error
    ]
    edit_phase(at, 1, setting="1.0")
    assert not at.error, [e.value for e in at.error]


def _number(text: str) -> float:
    return float(text.split()[0].replace(",", ""))


def test_both_mac_hours_are_shown_and_comparisons_use_the_end_tidal_ones():
    """Defect 8: dial-based and end-tidal MAC-hours, labelled; Compare's cards use end-tidal."""
    from model import compute_case
    from model.io.plans import load_plan

    at = page("case_plan.py")
    assert metric_value(at, "End-tidal MAC-h")
    assert any(c.value.startswith("Dial-based:") for c in at.caption)
    phases = next(d.value for d in at.dataframe if "MAC-hours, end-tidal" in d.value.columns)
    assert "MAC-hours, dial-based" in phases.columns
    cmp = page("compare.py")
    cmp.multiselect(key="cmp_plans").set_value(
        ["Laparoscopic cholecystectomy, high flow", "Laparoscopic cholecystectomy, low flow"]
    )
    run(cmp)
    low = compute_case(load_plan(ROOT / "demo_data" / "plans" / "lap_chole_low_flow.toml")).totals
    card = next(m for m in cmp.metric if "MAC-h" in m.label)
    assert card.label == "End-tidal MAC-h"
    assert float(card.value) == pytest.approx(low["end_tidal_mac_hours"], abs=0.01)
    table = cmp.dataframe[0].value.set_index("figure")
    assert {"MAC-hours, end-tidal", "MAC-hours, dial-based"} <= set(table.index)


def test_a_plan_files_own_prices_apply_only_when_chosen_and_are_kept_when_saved(isolated_store):
    """Defect 2: on Case plan, a plan's own [prices] apply only when ticked; saving keeps them."""
    from dataclasses import replace

    from model.io.plans import load_plan

    page("case_plan.py")  # the first run seeds the demo plans
    store = Store(isolated_store)
    plan = load_plan(ROOT / "demo_data" / "plans" / "lap_chole_high_flow.toml")
    store.save_plan(replace(plan, name="Priced plan", prices={"bottle": {"sevoflurane": 1200.0}}))
    at = page("case_plan.py")  # the most recent plan opens first
    assert at.text_input(key="cp_name").value == "Priced plan"
    cost = _number(metric_value(at, "Cost"))
    at.checkbox(key="cp_own_prices").check()
    run(at)
    # Ten times the invented sevoflurane bottle price (120 -> 1200) raises the case's cost.
    assert _number(metric_value(at, "Cost")) > 2 * cost
    line = next(c.value for c in at.caption if "Prices in use" in c.value).replace("\\", "")
    assert "the own prices of the plan 'Priced plan' for sevoflurane bottle" in line
    at.checkbox(key="cp_own_prices").uncheck()
    run(at)
    click(at, "Save")
    assert store.load_plan("Priced plan").prices == {"bottle": {"sevoflurane": 1200.0}}


def test_importing_a_plan_file_opens_it_without_an_exception():
    at = page("case_plan.py")
    text = (ROOT / "demo_data" / "plans" / "lap_chole_low_flow.toml").read_text(encoding="utf-8")
    text = text.replace("Laparoscopic cholecystectomy, low flow", "Imported QA plan")
    at.get("file_uploader")[0].upload("qa.toml", text.encode()).run()
    assert not at.exception, [e.message for e in at.exception]
    assert at.text_input(key="cp_name").value == "Imported QA plan"
    assert any("Imported" in s.value for s in at.success)


def test_case_emissions_in_tonnes_show_three_significant_figures():
    at = page("case_plan.py")
    kg = float(next(m.value for m in at.metric if m.label == "Emissions (kg CO2e)").replace(",", ""))
    at.selectbox(key="gl_co2e_unit").select("t CO2e").run()
    t = float(next(m.value for m in at.metric if m.label == "Emissions (t CO2e)"))
    # 1 t = 1000 kg (SI); the shown value keeps three significant figures of the kg figure.
    assert t == pytest.approx(kg / 1000, rel=5e-3)


def test_flow_sweep_best_flows_follow_the_sidebar_flow_unit():
    at = page("case_plan.py")
    at.session_state["cp_tab"] = "Flow sweep"  # the sweep runs only in its open tab
    at.selectbox(key="gl_flow_unit").select("mL/min").run()
    assert not at.exception, [e.message for e in at.exception]
    line = next(m.value for m in at.markdown if "lowest cost at" in m.value)
    assert "mL/min" in line and "**0.5 L/min**" not in line


def test_after_saving_under_a_new_name_the_picker_shows_that_plan_and_the_note_empties():
    at = page("case_plan.py")
    at.text_input(key="cp_name").input("QA renamed plan").run()
    at.text_input(key="cp_note").input("first note").run()
    next(b for b in at.button if b.label == "Save").click().run()
    assert not at.exception, [e.message for e in at.exception]
    # The picker and its version list name the plan being edited, so "Open" reopens it.
    assert at.selectbox(key="cp_open_name").value == "QA renamed plan"
    assert at.selectbox(key="cp_open_version").options == ["latest", "1"]
    assert at.text_input(key="cp_note").value == ""


def _edit_o2(at: AppTest, text: str) -> None:
    key = at.data_editor[0].key
    at.session_state[key] = {"edited_rows": {1: {"O2": text}}, "added_rows": [], "deleted_rows": []}
    at.run()
    assert not at.exception, [e.message for e in at.exception]


def test_a_bare_flow_is_read_in_the_unit_the_phases_table_shows():
    at = page("case_plan.py")
    at.selectbox(key="gl_flow_unit").select("mL/min").run()
    _edit_o2(at, "400 mL/min")
    with_unit = next(m.value for m in at.metric if m.label == "Oxygen")
    _edit_o2(at, "400")
    assert not at.error, [e.value for e in at.error]
    assert next(m.value for m in at.metric if m.label == "Oxygen") == with_unit


def test_a_bad_setting_is_named_in_the_page_words_not_the_program_name():
    """Item 10: "inspired O2 floor", not "settings.inspired_o2_floor"."""
    at = page("case_plan.py")
    at.text_input(key="cp_floor").input("200 %")
    run(at)
    shown = [e.value.replace("\\", "") for e in at.error]
    assert any(m.startswith("inspired O2 floor") for m in shown), shown
    assert not any("settings." in m or "inspired_o2_floor" in m for m in shown)
