"""AppTest of the Department year page and the year tab of the Compare page."""

from __future__ import annotations

import json

from streamlit.testing.v1 import AppTest

from model.store import Store
from tests.helpers import ROOT
from tests.helpers.pages import app, click, go, metric_value, page, run

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
    # The message may be shown with markdown escapes; the column is named as the table heads it.
    assert at.error and "row 1, median min" in at.error[0].value.replace("\\", "")
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
    assert any(c.value == "P5-P95 ranges over case mix and prices." for c in at.caption)


def walk(node):
    """Every element under ``node`` in page order (AppTest's tree, depth first)."""
    for child in getattr(node, "children", {}).values():
        yield child
        yield from walk(child)


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


def _year_at_half_litre(at: AppTest) -> str:
    name = at.selectbox(key="dy_scenario").value
    at.checkbox(key=f"dy_uf_{name}").check()
    run(at)
    at.number_input(key=f"dy_flow_{name}").set_value(0.5)
    return name


def test_an_unsafe_year_practice_is_marked_unsafe_next_to_its_headline():
    """Defect 4: a 0.5 L/min maintenance practice (its mix unchanged) predicts a hypoxic mixture.

    The hazard shows first, in its own style, next to the headline, and the figures are marked unsafe.
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
    # Named in the table's own words ("median min"), never the file key "median_duration".
    assert any("row 1, median min" in e.value.replace("\\", "") for e in at.error)
    assert not any("median_duration" in e.value.replace("\\", "") for e in at.error)
    assert metric_value(at, "Cost") == cost
    assert any("last valid result" in w.value for w in at.warning)
    assert at.number_input(key=f"dy_flow_{name}") is not None
    assert [d.proto.label for d in at.get("download_button")][:3] == ["CSV", "Excel", "HTML report"]
    # The error sits by the table, right after the case-mix editor (the headline figures are
    # drawn above the inputs, laptop first). AppTest shows the editor as a Dataframe element.
    order = [type(e).__name__ for e in walk(at.main) if type(e).__name__ in ("Dataframe", "Error", "Metric")]
    assert order.index("Error") == order.index("Dataframe") + 1


def _inputs(at: AppTest) -> dict:
    table = next(d.value for d in at.dataframe if list(d.value.columns) == ["input", "value"])
    return dict(zip(table["input"], table["value"], strict=True))


def test_year_exports_record_the_practice_mix_prices_and_version_that_produced_them():
    """Defect 6: after a change of practice on the page, the export's inputs say so.

    The inputs are the 'Inputs' sheet and the report's inputs, shown on the page as 'What
    produced these figures'.
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
    from model.io.case_mix import load_case_mix

    demo = load_case_mix(ROOT / "demo_data" / "year" / "fernhollow_casemix.csv")
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


def _band(caption: str) -> tuple[float, float]:
    low, high = caption.split(": ", 1)[1].split(" to ")
    return float(low.replace(",", "")), float(high.replace(",", ""))


def test_year_band_at_20_year_horizon_samples_only_20_year_gwp_values():
    at = page("department_year.py")
    at.radio(key="gl_horizon").set_value("20 years").run()
    assert not at.exception, [e.message for e in at.exception]
    expected = float(next(m.value for m in at.metric if m.label == "Emissions (t CO2e)").replace(",", ""))
    low, high = _band([c.value for c in at.caption if c.value.startswith("P5-P95")][1])
    # The expected CO2e and its P5-P95 range must use the same horizon: a GWP20 year is about 2.7 times
    # its GWP100 year (IPCC AR6 WG1 Table 7.SM.7 ratios, from memory), so a band of 100-year
    # draws would sit far below the expected value.
    assert low <= expected * 1.02 and high >= expected * 0.98


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


def test_year_bands_say_whether_they_include_model_physiology():
    # Default: the bands are of case mix and prices, and the caption and inputs say so; the
    # option widens what they hold, leaves the expected figures alone, and says so too.
    at = _page("department_year.py")
    cost = _metric(at, "Cost (GBP)")
    assert any("P5-P95 ranges over case mix and prices under each" in c.value for c in at.caption)
    assert not any("model physiology" in c.value for c in at.caption)
    key = next(c.key for c in at.checkbox if c.key and c.key.startswith("dy_model_unc_"))
    at.checkbox(key=key).check()
    at.run(timeout=300)
    assert not at.exception, [e.message for e in at.exception]
    assert any("P5-P95 ranges over case mix, prices and model physiology under each" in c.value for c in at.caption)
    assert _metric(at, "Cost (GBP)") == cost
    # The charts' ranges carry the same label in their legends.
    charts = [json.loads(c.proto.spec) for c in at.get("plotly_chart")]
    names = {t.get("name") for c in charts for t in c["data"]}
    assert "P5-P95 ranges over case mix, prices and model physiology" in names


def test_practice_edits_are_kept_per_scenario_named_while_another_is_shown_and_can_be_discarded():
    """A change of scenario keeps the unsaved edits of the one left, says so, and Discard edits undoes them."""
    at = app()
    go(at, "department_year.py")
    name = at.selectbox(key="dy_scenario").value
    cost = metric_value(at, "Cost")
    at.checkbox(key=f"dy_uf_{name}").check()
    run(at)
    at.number_input(key=f"dy_flow_{name}").set_value(0.8)
    run(at)
    edited_cost = metric_value(at, "Cost")
    assert edited_cost != cost
    assert any("not saved: practice" in w.value.replace("\\", "") for w in at.warning)
    other = next(o for o in at.selectbox(key="dy_scenario").options if o != name)
    at.selectbox(key="dy_scenario").select(other)
    run(at)
    kept = " ".join(c.value for c in at.caption).replace("\\", "")
    assert f"your edits of '{name}' (practice)" in kept
    at.selectbox(key="dy_scenario").select(name)
    run(at)
    assert at.number_input(key=f"dy_flow_{name}").value == 0.8
    assert metric_value(at, "Cost") == edited_cost
    click(at, "Discard edits")
    assert at.checkbox(key=f"dy_uf_{name}").value is False  # the scenario as saved
    assert metric_value(at, "Cost") == cost
    assert not any("not saved" in w.value for w in at.warning)


def test_the_page_says_how_bottles_are_counted_and_counts_them_across_months():
    import numpy as np

    from tests.helpers.pages import page as run_page

    at = run_page("department_year.py")
    bottles = next(m for m in at.metric if m.label == "Bottles bought")
    assert "carried into the next month" in bottles.proto.help
    # Common practice, no source: the year's isoflurane bottles are its liquid in whole bottles.
    monthly = next(d.value for d in at.dataframe if "Isoflurane bottles" in d.value.columns)
    liquid = monthly["Isoflurane liquid (mL)"].sum()
    assert monthly["Isoflurane bottles"].sum() == np.ceil(liquid / 250 - 1e-9)


def test_a_year_change_in_money_is_whole_with_its_currency():
    """Item 10: "-17,172 GBP", not "-17,172.2 GBP"; no "+0.00" in the bands."""
    import re

    at = _page("compare.py")
    value = next(m.value for m in at.metric if m.label == "Change in cost")
    assert re.fullmatch(r"[+-][\d,]+ GBP", value), value
    assert not any("+0.00" in c.value or "-0.0" in c.value for c in at.caption)
