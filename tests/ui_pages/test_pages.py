"""Streamlit AppTest for the dashboard pages: render, respond in the right direction, refuse bad input."""

from __future__ import annotations

import re
from dataclasses import replace

import pytest
from streamlit.testing.v1 import AppTest

from model.store import Store
from tests.helpers import ROOT
from tests.helpers.pages import TIMEOUT, page


def metric(at: AppTest, label: str) -> float:
    value = next(m.value for m in at.metric if m.label == label or m.label.startswith(label + " ("))
    return float(value.split()[0].replace(",", ""))


def open_plan(at: AppTest, name: str) -> None:
    at.selectbox(key="cp_open_name").select(name)
    at.run()
    next(b for b in at.button if b.label == "Open").click()
    at.run()
    assert not at.exception


def edit_phase(at: AppTest, row: int, **cells) -> None:
    key = at.data_editor[0].key
    at.session_state[key] = {"edited_rows": {row: cells}, "added_rows": [], "deleted_rows": []}
    at.run()
    assert not at.exception, [e.message for e in at.exception]


def test_app_entry_point_renders_with_navigation():
    at = AppTest.from_file(str(ROOT / "app.py"), default_timeout=TIMEOUT)
    at.run()
    assert not at.exception, [e.message for e in at.exception]
    assert any(m.label == "Liquid agent" for m in at.metric)  # the default page is the case plan


def test_case_plan_renders_on_demo_data_with_caution():
    at = page("case_plan.py")
    assert metric(at, "Liquid agent") > 0
    assert any("not a prescription" in i.value for i in at.info)
    assert not at.error


def test_lower_maintenance_flow_uses_less_liquid_agent():
    at = page("case_plan.py")
    open_plan(at, "Laparoscopic cholecystectomy, high flow")
    before = metric(at, "Liquid agent")
    cost_before = metric(at, "Cost")
    # 2 L/min (1 O2 + 1 air) down to 0.5 L/min, typed in two different units.
    edit_phase(at, 1, O2="250 mL/min", air="0.25 L/min")
    after = metric(at, "Liquid agent")
    # Source: Dion P., Can J Anaesth 1992 - liquid use is proportional to fresh gas flow at a
    # fixed dial, so a quarter of the maintenance flow cuts maintenance liquid to a quarter.
    assert after < before
    assert metric(at, "Cost") < cost_before
    # No input error; 0.5 L/min at 50 % O2 is predicted hypoxic, shown as the unsafe-practice box.
    assert all("UNSAFE PRACTICE" in e.value for e in at.error)


def test_desflurane_instead_of_sevoflurane_raises_emissions():
    at = page("case_plan.py")
    open_plan(at, "Laparoscopic cholecystectomy, high flow")
    before = metric(at, "Emissions")
    at.selectbox(key="cp_agent").select("desflurane")
    at.run()
    assert not at.exception
    # Source: IPCC AR6 WG1 Table 7.SM.7 - desflurane's GWP100 (2590) is over ten times
    # sevoflurane's (195), and the same dial % of desflurane is a little less liquid by mass.
    assert metric(at, "Emissions") > 5 * before


@pytest.mark.parametrize(
    "cells, shown",
    [
        ({"O2": "banana"}, "row 2, O2 flow"),
        ({"O2": "5 kg"}, "row 2, O2 flow"),
        ({"duration": "-10 min"}, "row 2, duration"),
        ({"setting": "40 %"}, "row 2, dial % or target"),
    ],
)
def test_invalid_phase_entry_shows_error_and_keeps_last_result(cells, shown):
    at = page("case_plan.py")
    before = metric(at, "Liquid agent")
    edit_phase(at, 1, **cells)
    assert any(shown in e.value for e in at.error), [e.value for e in at.error]
    assert metric(at, "Liquid agent") == before
    assert any("last valid result" in w.value for w in at.warning)


def test_invalid_patient_weight_shows_error_by_the_field():
    at = page("case_plan.py")
    at.text_input(key="cp_weight").input("heavy")
    at.run()
    assert not at.exception
    assert any("weight" in e.value for e in at.error)


def test_saving_keeps_versions_and_survives_a_new_session(isolated_store):
    at = page("case_plan.py")
    name = at.text_input(key="cp_name").value
    edit_phase(at, 1, O2="0.8 L/min")
    next(b for b in at.button if b.label == "Save").click()
    at.run()
    assert any("version 2" in s.value for s in at.success)
    # A new session (as after a restart) opens the store from the file and finds the change.
    store = Store(isolated_store)
    assert store.load_plan(name).phases[1].oxygen_l_min == 0.8
    assert store.load_plan(name, 1).phases[1].oxygen_l_min != 0.8
    again = page("case_plan.py")
    assert again.text_input(key="cp_name").value == name


def test_corrupt_plan_upload_is_refused_and_store_unchanged(isolated_store):
    at = page("case_plan.py")
    before = Store(isolated_store).count_versions()
    uploader = at.get("file_uploader")[0]
    uploader.upload("evil.toml", b"\x00\x01 not a plan \xff", "application/toml")
    at.run()
    assert not at.exception
    assert any("Not imported" in e.value for e in at.error)
    assert Store(isolated_store).count_versions() == before


def test_compare_renders_differences():
    at = page("compare.py")
    deltas = [m.delta for m in at.metric if m.label == "Liquid agent"]
    assert deltas and "%" in deltas[0]
    at.radio(key="cmp_side_by_side").set_value("Difference %").run()
    table = at.dataframe[0].value
    # One column per plan after the baseline, each its difference from the baseline in %.
    assert "figure" in table.columns and len(table.columns) >= 3
    assert table.set_index("figure").loc["Liquid agent"].iloc[-1] == pytest.approx(
        float(deltas[0].split("(")[-1].split()[0]), abs=1
    )


def test_compare_table_shows_emissions_in_the_sidebar_unit():
    at = page("compare.py")
    kg = at.dataframe[0].value.set_index("figure")
    at.selectbox(key="gl_co2e_unit").set_value("t CO2e").run()
    assert not at.exception
    t = at.dataframe[0].value.set_index("figure")
    assert t.loc["CO2e, total", "unit"] == "t CO2e" and kg.loc["CO2e, total", "unit"] == "kg CO2e"
    plan = [c for c in t.columns if c != "unit"][0]
    # SI prefixes: 1 t = 1000 kg.
    # (figures shown to four significant figures)
    assert t.loc["CO2e, total", plan] * 1000 == pytest.approx(kg.loc["CO2e, total", plan], rel=1e-3)
    assert t.loc["Liquid agent", plan] == kg.loc["Liquid agent", plan]


def test_compare_sets_a_plan_against_an_earlier_version_of_itself(isolated_store):
    page("compare.py")  # the first page run seeds the demo plans
    store = Store(isolated_store)
    name = "Laparoscopic cholecystectomy, low flow"
    plan = store.load_plan(name)
    # The same plan with every phase at twice the O2 flow, saved as its next version.
    doubled = replace(plan, phases=tuple(replace(p, oxygen_l_min=2 * p.oxygen_l_min) for p in plan.phases))
    assert store.save_plan(doubled, note="double O2") == 2
    at = page("compare.py")
    assert f"{name} · version 1" in at.multiselect(key="cmp_plans").options
    at.multiselect(key="cmp_plans").set_value([f"{name} · version 1", name]).run()
    assert not at.exception and not at.error, [e.value for e in at.error]
    # More fresh gas at the same dial vaporises more liquid (Dion's formula, docs/methods.md).
    assert next(m.delta for m in at.metric if m.label == "Liquid agent").startswith("+")


def test_compare_higher_flow_plan_shows_more_liquid():
    at = page("compare.py")
    at.multiselect(key="cmp_plans").set_value(
        ["Laparoscopic cholecystectomy, low flow", "Laparoscopic cholecystectomy, high flow"]
    )
    at.run()
    assert not at.exception
    delta = next(m.delta for m in at.metric if m.label == "Liquid agent")
    assert delta.startswith("+")


def test_reference_page_lists_sources_and_saves_overrides(isolated_store):
    at = page("reference.py")
    table = at.dataframe[0].value
    assert {"value", "source", "basis"} <= set(table.columns)
    assert table["source"].notna().all()
    at.number_input(key="ref_bottle_sevoflurane").set_value(240.0)
    next(b for b in at.button if b.label == "Save my values").click()
    at.run()
    assert not at.exception
    assert Store(isolated_store).load_overrides()["prices"]["bottle"]["sevoflurane"] == 240.0
    assert any("version 1" in s.value for s in at.success)


def test_reference_override_changes_case_cost(isolated_store):
    cp = page("case_plan.py")
    cost_before = metric(cp, "Cost")
    Store(isolated_store).save_overrides({"prices": {"bottle": {"sevoflurane": 480.0}}})
    cp2 = page("case_plan.py")
    # Invented demo price 120 per bottle -> 480: agent cost four times as high.
    assert metric(cp2, "Cost") > cost_before


HOSTILE_NAME = "<img src=x onerror=alert(1)>[click](javascript:alert(1))"


def test_hostile_plan_name_never_reaches_markdown_unescaped(isolated_store):
    from dataclasses import replace

    from model import load_plan

    page("case_plan.py")  # the first run seeds the demo plans
    store = Store(isolated_store)
    demo = load_plan(ROOT / "demo_data" / "plans" / "lap_chole_low_flow.toml")
    store.save_plan(
        replace(demo, name=HOSTILE_NAME, phases=tuple(replace(p, name="=" + HOSTILE_NAME[:40]) for p in demo.phases))
    )
    for name in ("case_plan.py", "compare.py"):
        at = AppTest.from_file(str(ROOT / "pages" / name), default_timeout=TIMEOUT)
        if name == "case_plan.py":
            at.run()
            assert at.text_input(key="cp_name").value == HOSTILE_NAME  # opened: most recent
        else:
            at.run()
        assert not at.exception
        shown = [
            e.value for kind in ("markdown", "caption", "success", "warning", "error", "info") for e in at.get(kind)
        ]
        assert any("\\<img src=x" in v for v in shown), (name, shown)
        # Markdown sources only ever hold the escaped form: no raw tag, no live link.
        assert not any(re.search(r"(?<!\\)<img", v) for v in shown)
        assert not any(re.search(r"(?<!\\)\]\(javascript", v) for v in shown)


def test_sidebar_gwp_horizon_and_flow_unit_apply():
    at = page("case_plan.py")
    before = metric(at, "Emissions")
    liquid = metric(at, "Liquid agent")
    at.radio(key="gl_horizon").set_value("20 years")
    at.run()
    assert not at.exception
    # Source: IPCC AR6 WG1 Table 7.SM.7 - every volatile agent's GWP20 exceeds its GWP100.
    assert metric(at, "Emissions") > before
    at.selectbox(key="gl_flow_unit").select("mL/min")
    at.run()
    assert not at.exception
    assert "mL/min" in at.data_editor[0].value["O2"].iloc[1]
    assert metric(at, "Liquid agent") == liquid  # the same plan, only shown differently


def test_a_vaporizer_maximum_raised_on_the_reference_page_lets_a_plan_dial_above_the_default():
    at = page("case_plan.py")
    open_plan(at, "Laparoscopic cholecystectomy, high flow")
    before = metric(at, "Liquid agent")
    edit_phase(at, 1, setting="9 %")
    assert any("up to 8 %" in e.value for e in at.error), [e.value for e in at.error]

    ref = page("reference.py")
    ref.number_input(key="ref_vapmax_sevoflurane").set_value(10.0)
    next(b for b in ref.button if b.label == "Save my values").click()
    ref.run()
    assert not ref.exception and not ref.error, [e.value for e in ref.error]

    at = page("case_plan.py")
    open_plan(at, "Laparoscopic cholecystectomy, high flow")
    edit_phase(at, 1, setting="9 %")
    assert not at.error, [e.value for e in at.error]
    # Dion's formula (docs/methods.md): at the same flow, 9 % instead of 2 % vaporises more liquid.
    assert metric(at, "Liquid agent") > before


@pytest.mark.parametrize(
    "page_file", ["case_plan.py", "compare.py", "department_year.py", "record_audit.py", "reference.py", "orders.py"]
)
def test_every_page_says_which_prices_and_gwp_values_are_in_use(page_file):
    """Defect 2: every page shows which prices and GWP values are in use and where they come from."""
    at = page(page_file)
    line = next((c.value for c in at.caption if "Prices in use" in c.value), "").replace("\\", "")
    assert "built-in invented example prices" in line and "chosen in the sidebar" in line, line
