"""AppTests for the dashboard defects of issue 12 ("The dashboard a department can trust").

Each test's docstring names the defect it covers. The app runs from its entry point
(``app.py``, as a user gets it) wherever moving between pages matters.
"""

from __future__ import annotations

import pytest
from pagetest import ROOT, TIMEOUT, isolated_store, page  # noqa: F401  (isolated_store: autouse fixture)
from streamlit.testing.v1 import AppTest

from model.store import Store


def app() -> AppTest:
    at = AppTest.from_file(str(ROOT / "app.py"), default_timeout=TIMEOUT)
    at.run()
    assert not at.exception, [e.message for e in at.exception]
    return at


def run(at: AppTest) -> AppTest:
    at.run()
    assert not at.exception, [e.message for e in at.exception]
    return at


def go(at: AppTest, page_file: str) -> AppTest:
    at.switch_page(f"pages/{page_file}")
    return run(at)


def click(at: AppTest, text: str) -> AppTest:
    next(b for b in at.button if b.label.endswith(text)).click()
    return run(at)


def walk(node):
    """Every element under ``node`` in page order (AppTest's tree, depth first)."""
    for child in getattr(node, "children", {}).values():
        yield child
        yield from walk(child)


def metric_value(at: AppTest, label: str) -> str:
    return next(m.value for m in at.metric if m.label == label or m.label.startswith(label + " ("))


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


def test_department_year_and_reference_inputs_survive_a_visit_to_another_page():
    """Defect 1: every page's inputs survive navigation (Department year practice, Reference filters)."""
    at = app()
    go(at, "department_year.py")
    name = at.selectbox(key="dy_scenario").value
    at.checkbox(key=f"dy_uf_{name}").check()
    run(at)
    at.number_input(key=f"dy_flow_{name}").set_value(0.8)
    run(at)
    key = next(d.key for d in at.data_editor if d.key.startswith("dy_mix_"))
    at.session_state[key] = {"edited_rows": {0: {"cases_per_year": 4321}}, "added_rows": [], "deleted_rows": []}
    run(at)
    cost = metric_value(at, "Cost")
    go(at, "reference.py")
    at.text_input(key="ref_search").input("density")
    run(at)
    go(at, "case_plan.py")
    go(at, "department_year.py")
    assert at.checkbox(key=f"dy_uf_{name}").value is True
    assert at.number_input(key=f"dy_flow_{name}").value == 0.8
    assert at.data_editor[0].value["cases_per_year"].iloc[0] == 4321
    assert metric_value(at, "Cost") == cost
    go(at, "reference.py")
    assert at.text_input(key="ref_search").value == "density"


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


@pytest.mark.parametrize(
    "page_file", ["case_plan.py", "compare.py", "department_year.py", "record_audit.py", "reference.py"]
)
def test_every_page_says_which_prices_and_gwp_values_are_in_use(page_file):
    """Defect 2: every page shows which prices and GWP values are in use and where they come from."""
    at = page(page_file)
    line = next((c.value for c in at.caption if "Prices in use" in c.value), "").replace("\\", "")
    assert "built-in invented example prices" in line and "chosen in the sidebar" in line, line


def _year_at_half_litre(at: AppTest) -> str:
    name = at.selectbox(key="dy_scenario").value
    at.checkbox(key=f"dy_uf_{name}").check()
    run(at)
    at.number_input(key=f"dy_flow_{name}").set_value(0.5)
    return name


def test_an_unsafe_year_practice_is_marked_unsafe_next_to_its_headline():
    """Defect 4: a 0.5 L/min maintenance practice (its mix unchanged) predicts a hypoxic mixture; the
    hazard shows first, in its own style, next to the headline, and the figures are marked unsafe.
    """
    at = page("department_year.py")
    _year_at_half_litre(at)
    run(at)
    hazards = [e.value for e in at.error]
    # Textbook steady-state mass balance of inspired O2 in a circle (common practice, no source):
    # at 0.5 L/min with a 50 % O2 fresh gas and VO2 ~0.25 L/min, inspired O2 falls towards zero.
    assert hazards and "UNSAFE PRACTICE" in hazards[0] and "hypoxic mixture" in hazards[0]
    # Hazards are not left among the ordinary cautions or the labelling notes.
    cautions = [w.value for w in at.warning]
    assert not any("hypoxic mixture" in w for w in cautions)
    assert any("sevoflurane minimum" in w for w in cautions)  # labelling notes after
    # The banner comes before the headline figures on the page.
    order = [type(e).__name__ for e in walk(at.main) if type(e).__name__ in ("Error", "Metric")]
    assert order.index("Error") < order.index("Metric")
    # Page tables show readable headings ("P50" for p50).
    headline = next(d.value for d in at.dataframe if {"p50", "P50"} & set(d.value.columns))
    assert (headline["safety"] == "UNSAFE PRACTICE").all()


def test_a_case_mix_error_keeps_the_last_year_and_shows_the_error_by_the_table():
    """Defect 10: a bad case-mix cell leaves results, practice panel and downloads in place."""
    at = page("department_year.py")
    name = at.selectbox(key="dy_scenario").value
    cost = metric_value(at, "Cost")
    key = next(d.key for d in at.data_editor if d.key.startswith("dy_mix_"))
    at.session_state[key] = {"edited_rows": {0: {"median_duration": 5}}, "added_rows": [], "deleted_rows": []}
    run(at)
    assert any("row 1, median_duration" in e.value.replace("\\", "") for e in at.error)
    assert metric_value(at, "Cost") == cost
    assert any("last valid result" in w.value for w in at.warning)
    assert at.number_input(key=f"dy_flow_{name}") is not None
    assert [d.proto.label for d in at.get("download_button")][:3] == ["CSV", "Excel", "HTML report"]
    # The error sits by the table: between the case-mix editor and the headline figures.
    # (AppTest shows the editor as a Dataframe element; it is the first table on the page.)
    order = [type(e).__name__ for e in walk(at.main) if type(e).__name__ in ("Dataframe", "Error", "Metric")]
    assert order.index("Dataframe") < order.index("Error") < order.index("Metric")


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


def _inputs(at: AppTest) -> dict:
    table = next(d.value for d in at.dataframe if list(d.value.columns) == ["input", "value"])
    return dict(zip(table["input"], table["value"]))


def test_year_exports_record_the_practice_mix_prices_and_version_that_produced_them():
    """Defect 6: after a change of practice on the page, the export's inputs (the 'Inputs' sheet and
    the report's inputs, shown on the page as 'What produced these figures') say so.
    """
    import importlib.metadata

    at = page("department_year.py")
    name = _year_at_half_litre(at)
    at.number_input(key=f"dy_flow_{name}").set_value(0.8)
    run(at)
    key = next(d.key for d in at.data_editor if d.key.startswith("dy_mix_"))
    at.session_state[key] = {"edited_rows": {0: {"cases_per_year": 999}}, "added_rows": [], "deleted_rows": []}
    run(at)
    rows = _inputs(at)
    assert rows["maintenance flow"] == "0.8 L/min"
    assert "practice, case mix edited on this page" in rows["scenario"]
    assert rows["program"] == "fresh-gas-ledger " + importlib.metadata.version("fresh-gas-ledger")
    assert "built-in invented example prices" in rows["prices in use"]
    assert "IPCC AR6 GWP100" in rows["GWP values"]
    from model.io.casemix import load_casemix

    demo = load_casemix(ROOT / "demo_data" / "year" / "fernhollow_casemix.csv")
    cases = sum(t.cases_per_year for t in demo.types) - demo.types[0].cases_per_year + 999
    assert rows["case mix"].startswith(f"{len(demo.types)} case types, {cases:,} cases per year")


def test_a_year_is_saved_versioned_and_opened_again(isolated_store):
    """Defect 12: case mix and scenario saved in the store (new version each save), opened again."""
    at = page("department_year.py")
    name = _year_at_half_litre(at)
    at.number_input(key=f"dy_flow_{name}").set_value(0.8)
    run(at)
    cost = metric_value(at, "Cost")
    at.text_input(key=f"dy_save_name_{name}").input("Fernhollow trial")
    run(at)
    click(at, "Save")
    assert any("Saved 'Fernhollow trial' as version 1" in s.value.replace("\\", "") for s in at.success)
    store = Store(isolated_store)
    assert store.names("scenario") == ["Fernhollow trial"] and store.names("casemix") == ["Fernhollow trial"]
    saved = "Fernhollow trial · saved"
    assert at.selectbox(key="dy_scenario").value == saved
    assert at.number_input(key=f"dy_flow_{saved}").value == 0.8
    assert metric_value(at, "Cost") == cost
    # A second save is version 2; version 1 opens as it was.
    at.number_input(key=f"dy_flow_{saved}").set_value(1.2)
    run(at)
    click(at, "Save")
    assert [v.version for v in store.history("scenario", "Fernhollow trial")] == [2, 1]
    at.selectbox(key="dy_version").select("1")
    run(at)
    assert at.number_input(key=f"dy_flow_{saved} v1").value == 0.8
    assert metric_value(at, "Cost") == cost


def test_scenario_and_case_mix_files_upload_into_the_store(isolated_store):
    """Defect 12: a scenario file and its case mix uploaded together are saved and opened."""
    at = page("department_year.py")
    year = ROOT / "demo_data" / "year"
    text = (
        (year / "proposal_half_litre.toml")
        .read_text(encoding="utf-8")
        .replace('name = "Fernhollow proposal: 0.5 L/min maintenance"', 'name = "Uploaded proposal"')
    )
    at.get("file_uploader")[0].upload("uploaded.toml", text.encode())
    at.get("file_uploader")[1].upload("fernhollow_casemix.csv", (year / "fernhollow_casemix.csv").read_bytes())
    run(at)
    click(at, "Save the uploaded files")
    assert at.selectbox(key="dy_scenario").value == "Uploaded proposal · saved"
    assert Store(isolated_store).names("casemix") == ["Uploaded proposal"]
    # A bad case-mix file is refused whole: the store is unchanged.
    before = Store(isolated_store).count_versions()
    at.get("file_uploader")[1].upload("bad.csv", b"case_type,cases_per_year\nA,1\n")
    run(at)
    click(at, "Save the uploaded files")
    assert any("Not saved, the store is unchanged" in e.value for e in at.error)
    assert Store(isolated_store).count_versions() == before


def test_compare_takes_saved_years_and_several_proposals_against_a_chosen_baseline(isolated_store):
    """Defect 12: Compare's year tab offers saved years; any number of proposals, chosen baseline."""
    at = page("department_year.py")
    name = _year_at_half_litre(at)
    run(at)
    at.text_input(key=f"dy_save_name_{name}").input("Unsafe half litre")
    run(at)
    click(at, "Save")
    cmp = page("compare.py")
    options = cmp.selectbox(key="yc_base").options
    assert "Unsafe half litre · saved" in options
    cmp.selectbox(key="yc_base").select("Fernhollow proposal: 0.5 L/min maintenance")
    run(cmp)
    cmp.multiselect(key="yc_props").set_value(["Fernhollow baseline: 2 L/min maintenance", "Unsafe half litre · saved"])
    run(cmp)
    assert len([m for m in cmp.metric if m.label == "Change in cost"]) == 2
    table = next(d.value for d in cmp.dataframe if "year compared" in d.value.columns)
    assert set(table["year compared"]) == {"Fernhollow baseline: 2 L/min maintenance", "Unsafe half litre · saved"}
    # Defect 4 as well: the unsafe proposal (0.5 L/min at the plans' own O2 share) is marked.
    assert any("UNSAFE PRACTICE" in e.value for e in cmp.error)
    unsafe_rows = table[table["year compared"] == "Unsafe half litre · saved"]
    assert (unsafe_rows["safety"] == "UNSAFE PRACTICE").all()
    # The demo baseline at 2 L/min shows the 2 L/min year costing more than the 0.5 L/min proposal.
    base_rows = table[(table["year compared"] == "Fernhollow baseline: 2 L/min maintenance")]
    assert float(base_rows[base_rows["figure"].str.startswith("Cost")]["difference"].iloc[0]) > 0


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
