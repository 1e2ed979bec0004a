"""Regression tests for faults found in a QA pass of the dashboard pages (Streamlit AppTest)."""

from __future__ import annotations

import pytest
from pagetest import ROOT, TIMEOUT, isolated_store, page  # noqa: F401  (isolated_store: autouse fixture)
from streamlit.testing.v1 import AppTest

from model.reference import DEFAULT_REFERENCE


def test_importing_a_plan_file_opens_it_without_an_exception():
    at = page("case_plan.py")
    text = (ROOT / "demo_data" / "plans" / "lap_chole_low_flow.toml").read_text(encoding="utf-8")
    text = text.replace("Laparoscopic cholecystectomy, low flow", "Imported QA plan")
    at.get("file_uploader")[0].upload("qa.toml", text.encode()).run()
    assert not at.exception, [e.message for e in at.exception]
    assert at.text_input(key="cp_name").value == "Imported QA plan"
    assert any("Imported" in s.value for s in at.success)


def _click(at: AppTest, text: str) -> None:
    next(b for b in at.button if text in b.label).click().run()
    assert not at.exception, [e.message for e in at.exception]


def test_reference_form_shows_the_values_in_use_after_defaults_and_restore():
    at = page("reference.py")
    at.number_input(key="ref_bottle_sevoflurane").set_value(200.0)
    form_currency = next(t for t in at.text_input if t.label == "Currency label" and t.key != "gl_currency")
    form_currency.input("EUR")
    _click(at, "Save my values")
    assert at.text_input(key="gl_currency").value == "EUR"
    _click(at, "built-in defaults")
    # The form must show the defaults now in use, or saving it again brings the old values back.
    assert at.number_input(key="ref_bottle_sevoflurane").value != 200.0
    assert at.text_input(key="gl_currency").value == "GBP"
    at.selectbox(key="ref_restore_pick").select(1).run()
    _click(at, "Use this version again")
    assert at.number_input(key="ref_bottle_sevoflurane").value == 200.0
    assert at.text_input(key="gl_currency").value == "EUR"


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


def test_year_warnings_show_case_type_names_as_typed_not_as_markdown():
    at = page("department_year.py")
    name = at.selectbox(key="dy_scenario").value
    key = at.data_editor[0].key
    at.session_state[key] = {
        "edited_rows": {0: {"case_type": "Lap_chole *urgent*"}},
        "added_rows": [],
        "deleted_rows": [],
    }
    at.checkbox(key=f"dy_uf_{name}").check()
    at.run()
    at.number_input(key=f"dy_flow_{name}").set_value(0.3).run()
    assert not at.exception, [e.message for e in at.exception]
    named = [w.value for w in at.warning if "urgent" in w.value]
    assert named, "a 0.3 L/min maintenance flow should warn, naming the case type"
    # Escaped for markdown: the asterisks show as typed instead of turning the name italic.
    assert all("\\*urgent\\*" in w for w in named)


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


def test_record_file_missing_columns_is_named_as_uploaded_not_by_its_temporary_copy():
    at = page("record_audit.py")
    at.radio(key="ra_source").set_value("Upload files").run()
    at.get("file_uploader")[0].upload("theatre_export.csv", b"case_id,elapsed,agent\nA,0,sevo\n").run()
    assert not at.exception, [e.message for e in at.exception]
    message = " ".join(e.value for e in at.error)
    assert "theatre\\_export\\.csv" in message and "missing required column" in message
    assert "gas\\-ledger\\-audit" not in message and "/tmp" not in message


def test_record_audit_offers_an_html_report_like_every_results_view():
    at = page("record_audit.py")
    labels = [d.proto.label for d in at.get("download_button")]
    assert labels == ["CSV", "Excel", "HTML report"]


def _band(caption: str) -> tuple[float, float]:
    low, high = caption.split(": ", 1)[1].split(" to ")
    return float(low.replace(",", "")), float(high.replace(",", ""))


def test_year_band_at_20_year_horizon_samples_only_20_year_gwp_values():
    at = page("department_year.py")
    at.radio(key="gl_horizon").set_value("20 years").run()
    assert not at.exception, [e.message for e in at.exception]
    expected = float(next(m.value for m in at.metric if m.label == "Emissions (t CO2e)").replace(",", ""))
    low, high = _band([c.value for c in at.caption if c.value.startswith("P5-P95")][1])
    # The expected CO2e and its band must use the same horizon: a GWP20 year is about 2.7 times
    # its GWP100 year (IPCC AR6 WG1 Table 7.SM.7 ratios, from memory), so a band of 100-year
    # draws would sit far below the expected value.
    assert low <= expected * 1.02 and high >= expected * 0.98


def test_year_comparison_warnings_are_escaped_like_every_other_message():
    at = page("compare.py")
    year = [w.value for w in at.warning if "Inguinal hernia repair" in w.value]
    assert year, "the demo proposal's low maintenance flow should warn"
    # Escaped for markdown (ui.md): punctuation carries its backslash, so names show as typed.
    assert all("\\:" in w and ": " not in w.replace("\\: ", "") for w in year)


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


def test_user_gwp_values_without_nitrous_oxide_serve_plans_without_it_and_name_it_for_plans_with_it():
    at = page("reference.py")
    for agent in ("sevoflurane", "desflurane", "isoflurane", "halothane"):
        at.number_input(key=f"ref_gwp_{agent}").set_value(150.0)
    _click(at, "Save my values")
    assert not at.error, [e.value for e in at.error]
    assert "User values" in at.selectbox(key="gl_gwp").options

    plan = page("case_plan.py")
    emissions = next(m for m in plan.metric if m.label.startswith("Emissions"))
    ar6 = float(emissions.value.replace(",", ""))
    plan.selectbox(key="gl_gwp").set_value("User values").run()
    assert not plan.exception and not plan.error, [e.value for e in plan.error]
    # The first demo plan gives sevoflurane and no N2O, so its CO2e scales with the agent's
    # GWP alone: 150 against the AR6 value (proportionality of CO2e = mass x GWP, docs/methods.md, CO2-equivalent).
    user = float(next(m for m in plan.metric if m.label.startswith("Emissions")).value.replace(",", ""))
    assert user == pytest.approx(ar6 * 150.0 / DEFAULT_REFERENCE.gwp("sevoflurane", "ar6_gwp100"), rel=0.01)
    # A plan that gives N2O is not worked out under a source without an N2O value, and says why.
    plan.selectbox(key="cp_open_name").set_value("Hip replacement, desflurane with N2O")
    _click(plan, "Open")
    message = " ".join(e.value for e in plan.error)
    assert "User values has no value for nitrous\\_oxide" in message and "Reference page" in message


def _per_case_liquid_ml(at: AppTest) -> float:
    text = next(c.value for c in at.caption if c.value.startswith("Per case:"))
    return float(text.split("CO2e, ")[1].split(" mL")[0].replace(",", ""))


def test_year_follows_the_sidebar_room_temperature_like_the_case_plan():
    at = page("department_year.py")
    cool = _per_case_liquid_ml(at)
    at.number_input(key="gl_temp").set_value(30.0).run()
    assert not at.exception, [e.message for e in at.exception]
    # Ideal gas (docs/methods.md, Vapour from liquid): warmer liquid gives more vapour per mL, so less liquid for the
    # same dial; the year must move with the sidebar's temperature as a single case does.
    assert _per_case_liquid_ml(at) < cool


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
