"""The Reference page (AppTest): the values in use after defaults and restore, and where saved values reach."""

from __future__ import annotations

import pytest
from streamlit.testing.v1 import AppTest

from model.reference import DEFAULT_REFERENCE
from model.store import Store
from tests.helpers.pages import metric_value, page, run


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


def _number(text: str) -> float:
    return float(text.split()[0].replace(",", ""))


def test_prices_saved_on_the_reference_page_reach_the_department_year(isolated_store):
    """Defect 2: the Reference page's prices apply to the year; a scenario's own only when chosen."""
    before = page("department_year.py")
    cost = _number(metric_value(before, "Cost"))
    Store(isolated_store).save_overrides({"prices": {"bottle": {"sevoflurane": 480.0}}}, note="test")
    at = page("department_year.py")
    # Four times the invented bottle price (120 -> 480) for sevoflurane, the demo mix's main agent.
    assert _number(metric_value(at, "Cost")) > 1.5 * cost
    line = next(c.value for c in at.caption if "Prices in use" in c.value).replace("\\", "")
    assert "your values from the Reference page (version 1" in line and "sevoflurane bottle" in line
    assert "GWP values:" in line and "IPCC AR6 GWP100" in line
    # The scenario file's own prices (invented: 118 per sevoflurane bottle) only when chosen.
    name = at.selectbox(key="dy_scenario").value
    at.checkbox(key=f"dy_own_prices_{name}").check()
    run(at)
    assert _number(metric_value(at, "Cost")) < 1.1 * cost
    line = next(c.value for c in at.caption if "Prices in use" in c.value).replace("\\", "")
    assert "the own prices of the scenario" in line and "chosen on this page" in line


def test_mac_set_chosen_on_the_reference_page_is_used_and_named_on_other_pages(isolated_store):
    at = page("reference.py")
    at.selectbox(key="ref_macset").set_value("prescribing_information")
    _click(at, "Save my values")
    saved = Store(isolated_store).load_overrides()
    # Only the set is saved: the MAC values left as they were follow the set, not the user.
    assert saved == {"mac": {"set": "prescribing_information"}}
    # Source: sevoflurane prescribing information (2.1 % at 40 y in O2).
    assert at.number_input(key="ref_mac_sevoflurane").value == pytest.approx(2.1)
    plan = page("case_plan.py")
    line = next(c.value for c in plan.caption if "MAC at age 40" in c.value).replace("\\", "")
    assert "prescribing information" in line
    _click(at, "built-in defaults")
    # Source: Mapleson WW, Br J Anaesth 1996;76:179-85 (abstract): 1.80 % at 40.
    assert at.number_input(key="ref_mac_sevoflurane").value == pytest.approx(1.8)
    assert at.selectbox(key="ref_macset").value == "mapleson_1996"


def _versions() -> int:
    return len(Store().history("overrides", "dashboard"))


def test_a_changed_value_is_listed_old_to_new_and_saved_only_by_the_button():
    at = page("reference.py")
    old = at.number_input(key="ref_bottle_sevoflurane").value
    at.number_input(key="ref_bottle_sevoflurane").set_value(200.0)
    run(at)  # what Enter in the field does: the value is entered, nothing is saved
    assert _versions() == 0
    listed = next(d.value for d in at.dataframe if "after saving" in d.value.columns)
    assert listed.to_dict("records") == [
        {"value": "prices.bottle.sevoflurane", "now": f"{old:g} (built-in default)", "after saving": "200"}
    ]
    _click(at, "Save my values")
    assert _versions() == 1
    assert any("prices.bottle.sevoflurane" in s.value and "-> 200" in s.value for s in at.success)


def test_saving_the_values_in_use_unchanged_makes_no_new_version():
    at = page("reference.py")
    _click(at, "Save my values")
    assert _versions() == 0
    assert any("nothing saved" in i.value for i in at.info)
    at.number_input(key="ref_bottle_sevoflurane").set_value(200.0)
    _click(at, "Save my values")
    _click(at, "Save my values")  # the same values again
    assert _versions() == 1
    # Putting back the values already in use makes none either.
    _click(at, "Use this version again")
    assert _versions() == 1
