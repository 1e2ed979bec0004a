"""Absorbent and time-weighted fresh gas flow from case records."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from model import compute_case
from model.audit.absorbent import absorbent_assumptions
from model.audit.engine import audit_records
from model.audit.reconcile import cost_view
from model.base.errors import InputError
from model.circle import ABSORBENT_CAPACITY_L_PER_KG, rebreathed_share
from model.patient import brody_vo2_ml_min
from model.plan import CasePlan, Phase, Settings
from model.reference import DEFAULT_REFERENCE, Reference
from tests.helpers.records import constant_case as _constant
from tests.helpers.records import write_records as _write


@pytest.mark.parametrize("engine", ["memory", "sql"])
@pytest.mark.parametrize("o2, air", [(0.5, 0.5), (0.3, 0.0), (2.0, 1.0)])
def test_constant_case_absorbent_equals_the_case_plan(tmp_path, engine, o2, air):
    plan = CasePlan(
        "constant",
        "sevoflurane",
        (Phase("maintenance", 60.0, o2, air, 0.0, 2.0),),
        settings=Settings(temperature_c=20.0),
    )
    expected = compute_case(plan).totals
    got = audit_records(
        [_write(tmp_path, _constant("K", 60, o2, air, 0.0, 2.0, "sevoflurane"))], engine=engine
    ).cases.iloc[0]
    # The same formula as the case plan (model.circle.rebreathed_share, the plan's absorbent
    # capacity) for the same flows and duration, so the same grams and cost.
    assert expected["absorbent_g"] > 0
    assert got["absorbent_g"] == pytest.approx(expected["absorbent_g"], rel=1e-9)
    assert got["cost_absorbent"] == pytest.approx(expected["cost_absorbent"], rel=1e-9)


def test_absorbent_follows_brody_and_the_rebreathed_share(tmp_path):
    rows = _constant("K", 30, 1.0, 0.0, 0.0, 2.0, "sevoflurane")
    got = audit_records([_write(tmp_path, rows)]).cases.iloc[0]
    a = absorbent_assumptions(DEFAULT_REFERENCE)
    # Source: Lowe HJ, Ernst EA 1981 (Brody's scaling, VCO2 = 0.8 x 10 x kg^0.75 mL/min).
    assert a.vco2_l_min * 1000 == pytest.approx(0.8 * 10 * 70**0.75, rel=1e-12)
    # Source: West JB, Respiratory Physiology (VA = 0.863 VCO2 / PaCO2, VD/VT 0.3, PaCO2 40 mmHg):
    # about 6 L/min for a 70 kg adult.
    assert a.minute_ventilation_l_min == pytest.approx(0.863 * 0.8 * 10 * 70**0.75 / 40 / 0.7, rel=1e-12)
    co2 = a.vco2_l_min * (1 - 1.0 / a.minute_ventilation_l_min) * 30
    assert got["co2_absorbed_l"] == pytest.approx(co2, rel=1e-12)
    # Source: soda lime takes up 10-20 L CO2 per 100 g in practice (from memory).
    assert 100 * co2 / 20 <= got["absorbent_g"] <= 100 * co2 / 10
    assert got["absorbent_g"] == pytest.approx(co2 / ABSORBENT_CAPACITY_L_PER_KG * 1000, rel=1e-12)


@pytest.mark.parametrize("engine", ["memory", "sql"])
def test_no_absorbent_when_every_flow_reaches_minute_ventilation(tmp_path, engine):
    ve = absorbent_assumptions(DEFAULT_REFERENCE).minute_ventilation_l_min
    rows = _constant("at", 20, ve, 0.0, 0.0, 1.0, "sevoflurane") + _constant(
        "above", 20, 6.0, 2.0, 0.0, 1.0, "sevoflurane"
    )
    c = audit_records([_write(tmp_path, rows)], engine=engine).cases
    # Common practice, no source: at or above minute ventilation nothing is rebreathed.
    assert float(rebreathed_share(ve, ve)) == 0.0
    assert c["co2_absorbed_l"].tolist() == [0.0, 0.0]
    assert c["absorbent_g"].tolist() == [0.0, 0.0] and c["cost_absorbent"].tolist() == [0.0, 0.0]


def test_settings_file_sets_the_assumed_patient(tmp_path):
    rows = _constant("K", 30, 1.0, 0.0, 0.0, 2.0, "sevoflurane")
    ref = Reference().with_overrides(
        {"absorbent": {"minute_ventilation_l_min": 8.0, "vco2_ml_min": 250, "capacity_l_per_kg": 100}}, "s.toml"
    )
    got = audit_records([_write(tmp_path, rows)], reference=ref)
    # The rebreathed share of the plans' formula with the user's values: 250 mL/min x (1 - 1/8).
    assert got.cases["co2_absorbed_l"].iloc[0] == pytest.approx(0.25 * (1 - 1 / 8) * 30, rel=1e-12)
    assert got.cases["absorbent_g"].iloc[0] == pytest.approx(0.25 * (1 - 1 / 8) * 30 / 100 * 1000, rel=1e-12)
    assert "s.toml" in got.settings["absorbent_estimate"]["sources"]["minute_ventilation_l_min"]
    only_weight = absorbent_assumptions(Reference().with_overrides({"absorbent": {"weight_kg": 90}}, "w.toml"))
    # Source: Lowe HJ, Ernst EA 1981 (Brody's scaling), at 90 kg.
    assert only_weight.vco2_l_min * 1000 == pytest.approx(0.8 * float(brody_vo2_ml_min(90)), rel=1e-12)
    for bad, text in (
        ({"minute_ventilation": 6}, "allowed fields"),
        ({"capacity_l_per_kg": 0}, "allowed range"),
        ({"weight_kg": "70"}, "finite number"),
    ):
        with pytest.raises(InputError, match=text):
            Reference().with_overrides({"absorbent": bad}, "bad.toml")


@pytest.mark.parametrize("engine", ["memory", "sql"])
def test_time_weighted_fgf_is_the_flow_weighted_by_time(tmp_path, engine):
    rng = np.random.default_rng(3)
    t = np.cumsum(rng.uniform(0.2, 2.0, 50))
    o2 = rng.uniform(0.2, 3.0, 50)
    air = rng.uniform(0.0, 1.0, 50)
    rows = [("W", ti, "Alder", "sevoflurane", oi, ai, 0.0, 2.0) for ti, oi, ai in zip(t, o2, air, strict=True)]
    c = audit_records([_write(tmp_path, rows)], engine=engine).cases.iloc[0]
    # Definition (common practice, no source): each flow weighted by the minutes it held.
    assert c["time_weighted_fgf_l_min"] == pytest.approx(np.average((o2 + air)[:-1], weights=np.diff(t)), rel=1e-12)
    cols = list(audit_records([_write(tmp_path, rows)]).cases.columns)
    assert cols.index("time_weighted_fgf_l_min") == cols.index("band_very_high_min") + 1


def test_theatre_month_summary_weights_each_case_by_its_minutes(tmp_path):
    rows = (
        _constant("a", 60, 0.5, 0.0, 0.0, 2.0, "sevoflurane", "Alder")
        + _constant("b", 20, 3.0, 0.0, 0.0, 2.0, "sevoflurane", "Alder")
        + _constant("c", 10, 1.0, 0.0, 0.0, 2.0, "sevoflurane", "Birch")
    )
    r = audit_records([_write(tmp_path, rows)])
    tm = r.by("theatre_month").set_index("theatre")
    # Definition: (0.5 x 60 + 3 x 20) / 80 min, not the mean of the two cases' flows.
    assert tm.loc["Alder", "time_weighted_fgf_l_min"] == pytest.approx((0.5 * 60 + 3 * 20) / 80)
    assert tm.loc["Alder", "band_minimal_min"] == 60 and tm.loc["Alder", "band_high_min"] == 20
    assert tm.loc["Birch", "time_weighted_fgf_l_min"] == pytest.approx(1.0)
    assert r.to_dict()["by_theatre_month"][0]["theatre"] == "Alder"
    assert r.total["absorbent_g"] == pytest.approx(r.cases["absorbent_g"].sum())


def test_cost_view_prices_purchases_and_recorded_use_with_the_absorbent_estimate(tmp_path):
    rows = _constant("K", 60, 1.0, 0.0, 1.0, 2.0, "sevoflurane")
    r = audit_records([_write(tmp_path, rows)])
    month = r.cases["month"].iloc[0]
    bottle = DEFAULT_REFERENCE.agents["sevoflurane"].bottle_volume
    purchases = pd.DataFrame(
        {
            "month": [month, month],
            "item": ["sevoflurane", "oxygen"],
            "unit": ["mL", "L"],
            "amount": [2 * bottle, 1000.0],
        }
    )
    view = cost_view(purchases, r, DEFAULT_REFERENCE).set_index("item")
    prices = DEFAULT_REFERENCE.prices
    # Invented example prices of the reference: a bottle and 1000 L of O2.
    assert view.loc["sevoflurane", "purchased_cost"] == pytest.approx(2 * prices.bottle["sevoflurane"])
    assert view.loc["oxygen", "purchased_cost"] == pytest.approx(prices.oxygen_per_1000_l)
    assert view.loc["sevoflurane", "recorded_cost"] == pytest.approx(r.total["cost_agent"])
    assert view.loc["nitrous_oxide", "recorded_cost"] == pytest.approx(r.total["cost_nitrous_oxide"])
    assert np.isnan(view.loc["nitrous_oxide", "purchased_cost"])
    assert r.total["cost_absorbent"] > 0
    assert view.loc["absorbent (estimate)", "recorded_cost"] == pytest.approx(r.total["cost_absorbent"])
