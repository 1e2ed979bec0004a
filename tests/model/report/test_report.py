"""The emissions report: periods, sites, figures against the record audit and purchases, target, LMDI."""

from __future__ import annotations

import json
import math
import re
from datetime import date
from pathlib import Path

import globalwarmingpotentials as gwp_tables
import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from model.audit.engine import audit_records
from model.audit.reconcile import purchase_emissions
from model.audit.result import summarise
from model.base.errors import InputError
from model.io.purchases import load_purchases
from model.io.sites import parse_sites, read_sites
from model.reference import DEFAULT_REFERENCE, MAX_GWP
from model.report import (
    FACTORS,
    PeriodMix,
    build_report,
    decompose,
    lmdi_additive,
    logmean,
    month_shares,
    parse_period,
    parse_target,
    target_path_t,
)
from model.report.figures import assign_sites
from model.report.lmdi import RESIDUAL_ABS_KG, RESIDUAL_REL, ZERO_HANDLING

ROOT = Path(__file__).resolve().parents[3]
DEMO = ROOT / "demo_data" / "records"
YEARS = [DEMO / "fernhollow_2025.parquet", DEMO / "fernhollow_2026.parquet"]
PURCHASES = [DEMO / "fernhollow_purchases_2025.csv", DEMO / "fernhollow_purchases_2026.csv"]


@pytest.fixture(scope="module")
def demo():
    return audit_records(YEARS)


@pytest.fixture(scope="module")
def demo_purchases():
    return pd.concat([load_purchases(p).table for p in PURCHASES], ignore_index=True)


# ---- LMDI ------------------------------------------------------------------------------


def test_two_sector_worked_example_by_hand_from_the_lmdi_i_formulas():
    # Source: Ang B.W., Energy Policy 2005;33:867-71, Table 1, additive LMDI-I:
    # dX_k = sum_i L(E_i^T, E_i^0) ln(x_ik^T / x_ik^0), L(a, b) = (a - b) / (ln a - ln b).
    # Two sectors, our own numbers, E = Q x S_i x I_i. Year 0: Q = 100, S = (0.6, 0.4),
    # I = (2, 5), E = (120, 200). Year T: Q = 120, S = (0.5, 0.5), I = (1.8, 5.5), E = (108, 330).
    # Worked by hand: L1 = -12 / ln 0.9 = 113.895, L2 = 130 / ln 1.65 = 259.597;
    # activity (L1 + L2) ln 1.2 = 68.096; structure L1 ln(5/6) + L2 ln 1.25 = 37.162;
    # intensity L1 ln 0.9 + L2 ln 1.1 = 12.742; together 118.000 = 438 - 320.
    x0 = np.array([[100, 100], [0.6, 0.4], [2, 5]])
    x1 = np.array([[120, 120], [0.5, 0.5], [1.8, 5.5]])
    c = lmdi_additive(x0.prod(axis=0), x1.prod(axis=0), x0, x1)
    assert float(logmean(108, 120)) == pytest.approx(113.895, abs=1e-3)
    assert float(logmean(330, 200)) == pytest.approx(259.597, abs=1e-3)
    assert c.sum(axis=1) == pytest.approx([68.096, 37.162, 12.742], abs=2e-3)
    assert c.sum() == pytest.approx(118.0, abs=1e-9)


def _mix(hours, agent_hours, agent_kg, n2o_kg, source="ar6_gwp100"):
    from model.reference import DEFAULT_REFERENCE as ref

    return PeriodMix(
        hours,
        dict(agent_hours),
        dict(agent_kg),
        {a: ref.gwp(a, source) for a in agent_kg},
        n2o_kg,
        ref.gwp("nitrous_oxide", source),
        source,
    )


BASE = _mix(
    2000.0,
    {"sevoflurane": 1500.0, "desflurane": 200.0, "isoflurane": 100.0},
    {"sevoflurane": 40.0, "desflurane": 13.0, "isoflurane": 1.5},
    30.0,
)


def _parts(d):
    return {f: d.contribution(f) for f in FACTORS}


def test_more_hours_at_the_same_mix_and_practice_is_all_activity():
    s = 1.3
    now = _mix(
        2000 * s,
        {a: h * s for a, h in BASE.agent_hours.items()},
        {a: m * s for a, m in BASE.agent_kg.items()},
        30.0 * s,
    )
    d = decompose(BASE, now)
    # The identity of the method: a change in one factor only goes wholly to it.
    assert d.contribution("activity") == pytest.approx(d.change_kg, rel=1e-12)
    assert d.change_kg == pytest.approx(0.3 * BASE.co2e_kg, rel=1e-12)
    for f in FACTORS[1:]:
        assert d.contribution(f) == pytest.approx(0.0, abs=1e-9)


def test_a_change_of_mix_alone_is_all_agent_mix():
    # Desflurane hours move to sevoflurane; each agent keeps its kg per hour, N2O its kg per hour.
    hrs = {"sevoflurane": 1650.0, "desflurane": 50.0, "isoflurane": 100.0}
    kg = {a: BASE.agent_kg[a] / BASE.agent_hours[a] * hrs[a] for a in hrs}
    d = decompose(BASE, _mix(2000.0, hrs, kg, 30.0))
    assert d.change_kg < 0
    assert d.contribution("agent mix") == pytest.approx(d.change_kg, rel=1e-12)
    for f in ("activity", "intensity", "N2O use", "GWP source"):
        assert d.contribution(f) == pytest.approx(0.0, abs=1e-9)


def test_lower_intensity_alone_is_all_intensity_and_less_n2o_alone_is_all_n2o_use():
    d = decompose(BASE, _mix(2000.0, BASE.agent_hours, {**BASE.agent_kg, "sevoflurane": 30.0}, 30.0))
    assert d.contribution("intensity") == pytest.approx(d.change_kg, rel=1e-12)
    assert d.change_kg == pytest.approx(-10.0 * BASE.agent_gwp["sevoflurane"], rel=1e-12)
    d = decompose(BASE, _mix(2000.0, BASE.agent_hours, BASE.agent_kg, 12.0))
    assert d.contribution("N2O use") == pytest.approx(d.change_kg, rel=1e-12)
    assert d.contribution("activity") == pytest.approx(0.0, abs=1e-9)


def test_another_gwp_source_alone_is_all_gwp_source():
    ar5 = _mix(2000.0, BASE.agent_hours, BASE.agent_kg, 30.0, source="ar5_gwp100")
    d = decompose(ar5, BASE)
    assert d.contribution("GWP source") == pytest.approx(d.change_kg, rel=1e-12)
    # Source: globalwarmingpotentials (PyPI): N2O AR5 and AR6 GWP100 (the part of N2O).
    n2o = d.detail.set_index(["factor", "term"]).loc[("GWP source", "nitrous_oxide"), "contribution_kg"]
    assert n2o == pytest.approx(30.0 * (gwp_tables.data["AR6GWP100"]["N2O"] - gwp_tables.data["AR5GWP100"]["N2O"]))


def test_an_agent_used_in_one_period_only_goes_to_the_mix_and_the_small_value_strategy_agrees():
    # Ang & Liu 2007 (Energy Policy 35:238-46): the analytical limit gives the whole change of a
    # term that appears (or vanishes) to the factor that was zero; the small-value strategy
    # (zeros in the data replaced by a small number) converges to it as the number shrinks,
    # like 1 / ln(1 / small) (the LMDI weight L(C, small) does).
    now = _mix(
        2000.0,
        {"sevoflurane": 1700.0, "isoflurane": 100.0, "desflurane": 0.0},
        {"sevoflurane": 40.0 / 1500 * 1700, "isoflurane": 1.5, "desflurane": 0.0},
        30.0,
    )
    d = decompose(BASE, now)
    des = d.detail[d.detail["term"] == "desflurane"].set_index("factor")["contribution_kg"]
    assert des["agent mix"] == pytest.approx(-13.0 * BASE.agent_gwp["desflurane"], rel=1e-12)
    assert des.drop("agent mix").abs().max() == 0.0
    exact = d.by_factor["contribution_kg"].to_numpy()
    errors = []
    for small in (1e-10, 1e-20, 1e-40, 1e-80, 1e-160):
        s = decompose(BASE, now, zero_handling="small_value", small_value=small)
        assert s.by_factor["contribution_kg"].sum() == pytest.approx(d.change_kg, rel=1e-9)
        errors.append(np.abs(s.by_factor["contribution_kg"].to_numpy() - exact).max())
    assert all(b < a for a, b in zip(errors, errors[1:], strict=False))
    assert errors[-1] / errors[1] == pytest.approx(math.log(1e20) / math.log(1e160), rel=0.1)
    back = decompose(now, BASE)
    assert back.detail.set_index(["factor", "term"]).loc[
        ("agent mix", "desflurane"), "contribution_kg"
    ] == pytest.approx(13.0 * BASE.agent_gwp["desflurane"], rel=1e-12)


_amount = st.one_of(st.just(0.0), st.floats(0.01, 5000.0))


@st.composite
def _period_mix(draw):
    hrs = {a: draw(_amount) for a in ("sevoflurane", "desflurane", "isoflurane")}
    kg = {a: (draw(st.floats(0.0, 100.0)) if hrs[a] > 0 else 0.0) for a in hrs}
    total = sum(hrs.values()) + draw(st.floats(0.0, 500.0))
    n2o = draw(_amount) if total > 0 else 0.0
    return _mix(total, hrs, kg, n2o, draw(st.sampled_from(["ar6_gwp100", "ar5_gwp100", "ar6_gwp20"])))


@pytest.mark.slow
@settings(max_examples=300, deadline=None)
@given(_period_mix(), _period_mix())
def test_lmdi_parts_add_to_the_total_change(a, b):
    d = decompose(a, b)
    total = d.by_factor["contribution_kg"].sum()
    assert math.isfinite(total)
    assert total == pytest.approx(b.co2e_kg - a.co2e_kg, rel=1e-9, abs=1e-6)
    assert d.detail["contribution_kg"].sum() == pytest.approx(total, rel=1e-12, abs=1e-9)


def _bound(d):
    # The bound model.report.lmdi documents for every mode.
    return RESIDUAL_REL * (abs(d.baseline_kg) + abs(d.period_kg)) + RESIDUAL_ABS_KG


def test_the_small_value_strategy_adds_up_when_an_agent_stops_and_its_gwp_is_not_given():
    # Ang & Liu 2007 (Energy Policy 35:238-46): the small-value strategy is LMDI-I on data
    # whose zeros are replaced by a small number, so its parts add to the change like
    # LMDI-I's do (Ang 2005, Energy Policy 33:867-71: "perfect decomposition"). Here the
    # period has no isoflurane and, like a report's period, no GWP for it (0).
    now = _mix(2000.0, {**BASE.agent_hours, "isoflurane": 0.0}, {**BASE.agent_kg, "isoflurane": 0.0}, 30.0)
    now = PeriodMix(now.hours, now.agent_hours, now.agent_kg, {**now.agent_gwp, "isoflurane": 0.0}, 30.0, now.n2o_gwp)
    s = decompose(BASE, now, zero_handling="small_value")
    assert s.change_kg == pytest.approx(-1.5 * BASE.agent_gwp["isoflurane"], rel=1e-12)
    assert abs(s.residual_kg) <= _bound(s)
    iso = s.detail[s.detail["term"] == "isoflurane"]["contribution_kg"].sum()
    assert iso == pytest.approx(s.change_kg, rel=1e-12)


def test_a_tiny_user_gwp_leaves_no_residual_in_either_mode():
    # A user GWP of 1e-30 kg CO2e/kg for desflurane is inside the allowed range [0, MAX_GWP]
    # (model.reference); the parts still add to the change (Ang 2005, perfect decomposition).
    assert 0 <= 1e-30 <= MAX_GWP
    tiny = {**BASE.agent_gwp, "desflurane": 1e-30}
    a = PeriodMix(BASE.hours, BASE.agent_hours, BASE.agent_kg, tiny, BASE.n2o_kg, BASE.n2o_gwp)
    b = PeriodMix(1800.0, BASE.agent_hours, {**BASE.agent_kg, "desflurane": 26.0}, tiny, 20.0, BASE.n2o_gwp)
    for mode in ZERO_HANDLING:
        d = decompose(a, b, zero_handling=mode)
        assert abs(d.residual_kg) <= _bound(d), mode
        des = d.detail[d.detail["term"] == "desflurane"]["contribution_kg"].sum()
        assert des == pytest.approx(13e-30, rel=1e-9, abs=1e-40), mode


_gwp_value = st.one_of(
    st.just(0.0),
    st.floats(5e-324, 1e-300),
    st.floats(1e-300, 1e-6),
    st.floats(1e-6, MAX_GWP),
)
_odd_amount = st.one_of(st.just(0.0), st.floats(5e-324, 1e-300), st.floats(1e-300, 1e-3), st.floats(1e-3, 5000.0))


@st.composite
def _odd_period_mix(draw):
    agents = ("sevoflurane", "desflurane", "isoflurane")
    hrs = {a: draw(_odd_amount) for a in agents}
    kg = {a: (draw(_odd_amount) if hrs[a] > 0 else 0.0) for a in agents}
    total = sum(hrs.values()) + draw(_odd_amount)
    n2o = draw(_odd_amount) if total > 0 else 0.0
    return PeriodMix(total, hrs, kg, {a: draw(_gwp_value) for a in agents}, n2o, draw(_gwp_value))


@pytest.mark.slow
@settings(max_examples=400, deadline=None)
@given(_odd_period_mix(), _odd_period_mix(), st.sampled_from(ZERO_HANDLING))
def test_lmdi_parts_sum_to_the_change_in_every_mode_with_tiny_and_zero_values(a, b, mode):
    # Ang 2005 (Energy Policy 33:867-71): LMDI-I is a perfect decomposition (no residual);
    # Ang & Liu 2007 (Energy Policy 35:238-46): so are its two ways of handling zeros.
    d = decompose(a, b, zero_handling=mode)
    parts = d.detail["contribution_kg"].to_numpy()
    assert np.isfinite(parts).all()
    assert abs(d.residual_kg) <= _bound(d)


# ---- periods -----------------------------------------------------------------------------


@pytest.mark.parametrize(
    "text, start, end",
    [
        ("2026", date(2026, 1, 1), date(2027, 1, 1)),
        ("FY2026-04", date(2026, 4, 1), date(2027, 4, 1)),
        ("fy2025-07", date(2025, 7, 1), date(2026, 7, 1)),
        ("2026Q2", date(2026, 4, 1), date(2026, 7, 1)),
        ("2026Q4", date(2026, 10, 1), date(2027, 1, 1)),
        ("2026-03", date(2026, 3, 1), date(2026, 4, 1)),
        ("2026-01-01..2026-06-30", date(2026, 1, 1), date(2026, 7, 1)),
    ],
)
def test_period_syntax(text, start, end):
    p = parse_period(text)
    assert (p.start, p.end) == (start, end)


def test_a_financial_year_from_april_is_april_to_march():
    p = parse_period("FY2026-04")
    # Common practice, no source: a financial year starting in April runs April to March.
    assert list(month_shares(p)) == [f"2026-{m:02d}" for m in range(4, 13)] + ["2027-01", "2027-02", "2027-03"]
    assert set(month_shares(p).values()) == {1.0} and p.months == 12
    assert p.label == "financial year April 2026 to March 2027"


@pytest.mark.parametrize(
    "text",
    [
        "2026H1",
        "FY2026",
        "FY2026-13",
        "2026Q5",
        "2026-02-30..2026-03-01",
        "2026-06-30..2026-01-01",
        "next year",
        "",
        "20266",
    ],
)
def test_an_unknown_period_gives_one_clear_message(text):
    with pytest.raises(InputError) as err:
        parse_period(text, "--period")
    msg = str(err.value)
    assert msg.startswith("--period: got") and "\n" not in msg


def test_financial_year_sums_exactly_april_to_march(demo):
    fy = build_report(demo.cases, parse_period("FY2025-04"))
    months = demo.by("month").set_index("month")
    inside = [f"2025-{m:02d}" for m in range(4, 13)] + ["2026-01", "2026-02", "2026-03"]
    # Every demo case starts and is counted in the same month (no case runs past midnight of a month's end
    # at its start), so the year is the sum of exactly those twelve months of the audit.
    assert fy.period.co2e_t * 1000 == pytest.approx(months.loc[inside, "co2e_total_kg"].sum(), rel=1e-12)
    assert fy.period.figures["cases"] == months.loc[inside, "cases"].sum()
    assert list(fy.period.by_month["month"]) == inside


def _records(tmp_path, starts):
    rows = []
    for i, t0 in enumerate(starts):
        for m in range(31):
            rows.append(
                (
                    f"C{i}",
                    (pd.Timestamp(t0) + pd.Timedelta(minutes=m)).strftime("%Y-%m-%d %H:%M:%S"),
                    "Alder",
                    "sevoflurane",
                    1.0,
                    1.0,
                    0.0,
                    2.0,
                )
            )
    p = tmp_path / "r.csv"
    pd.DataFrame(rows, columns=["case_id", "time", "theatre", "agent", "o2", "air", "n2o", "dial"]).to_csv(
        p, index=False
    )
    return audit_records([p])


def test_a_date_range_cuts_cases_by_their_start(tmp_path):
    # A case starting ten minutes before midnight on the last day runs into the next day: it is inside.
    a = _records(tmp_path, ["2026-01-01 00:00", "2026-06-30 23:50", "2026-07-01 00:00", "2025-12-31 23:59"])
    r = build_report(a.cases, parse_period("2026-01-01..2026-06-30"))
    assert sorted(r.period.cases["case_id"]) == ["C0", "C1"]
    one = a.cases[a.cases["case_id"] == "C0"]
    assert r.period.co2e_t * 1000 == pytest.approx(2 * one["co2e_total_kg"].iloc[0], rel=1e-12)


# ---- figures against the audit and the purchases ---------------------------------------


@pytest.mark.parametrize("gwp", ["ar6_gwp100", "ar5_gwp100", "ar6_gwp20"])
def test_use_based_figures_equal_the_record_audit_for_the_same_rows(gwp):
    audit = audit_records([YEARS[1]], gwp_source=gwp)
    r = build_report(audit.cases, parse_period("2026Q3"), gwp_source=gwp)
    rows = audit.cases[audit.cases["month"].isin(["2026-07", "2026-08", "2026-09"])]
    expected = summarise(rows, None).iloc[0]
    f = r.period.figures
    assert f["co2e_t"][gwp] * 1000 == pytest.approx(expected["co2e_total_kg"], rel=1e-12)
    assert f["co2e_n2o_t"][gwp] * 1000 == pytest.approx(expected["co2e_nitrous_oxide_kg"], rel=1e-12)
    assert f["hours"] * 60 == pytest.approx(expected["minutes"], rel=1e-12)
    assert f["cases"] == expected["cases"]
    assert f["cost"] == pytest.approx(expected["cost_total"] + expected["cost_absorbent"], rel=1e-12)
    assert f["absorbent_kg"] * 1000 == pytest.approx(expected["absorbent_g"], rel=1e-12)
    gas = expected["oxygen_l"] + expected["air_l"] + expected["nitrous_oxide_l"]
    assert f["fgf_l_min"] == pytest.approx(gas / expected["minutes"], rel=1e-12)
    assert f["fgf_l_min"] == pytest.approx(expected["time_weighted_fgf_l_min"], rel=1e-12)
    assert sum(f["band_share"].values()) == pytest.approx(1.0)


def test_period_totals_equal_the_sum_of_their_months_and_of_their_sites(demo):
    sites = read_sites(DEMO / "fernhollow_sites.csv")
    r = build_report(demo.cases, parse_period("2026"), sites=sites)
    total = r.period.co2e_t
    assert r.period.by_month["t_co2e"].sum() == pytest.approx(total, rel=1e-12)
    assert r.period.by_site["t_co2e"].sum() == pytest.approx(total, rel=1e-12)
    assert r.period.by_site["cases"].sum() == r.period.figures["cases"]
    assert r.period.by_agent.iloc[:, 4].sum() == pytest.approx(total, rel=1e-12)
    assert set(r.period.by_site["site"]) == {"Main theatres", "East wing", "Day surgery unit"}
    one = build_report(demo.cases, parse_period("2026"), sites=sites, chosen_sites=["East wing"])
    east = r.period.by_site.set_index("site").loc["East wing", "t_co2e"]
    assert one.period.co2e_t == pytest.approx(east, rel=1e-12)


def test_purchase_based_figures_equal_the_purchases_for_the_same_months(demo, demo_purchases):
    r = build_report(demo.cases, parse_period("2026Q1"), purchases=demo_purchases)
    pe = purchase_emissions(demo_purchases)
    expected = pe[pe["month"].isin(["2026-01", "2026-02", "2026-03"])]
    got = r.period.purchases.by_item.set_index("item")
    assert got["t CO2e (IPCC AR6 GWP100)"].sum() * 1000 == pytest.approx(expected["co2e_kg"].sum(), rel=1e-12)
    by_item = expected.groupby("item")["mass_kg"].sum()
    assert got["mass_kg"].to_dict() == pytest.approx(by_item.to_dict(), rel=1e-12)
    # A date range counts a month partly inside by its share of days.
    half = build_report(demo.cases, parse_period("2026-01-01..2026-01-16"), purchases=demo_purchases)
    jan = pe[pe["month"] == "2026-01"]["co2e_kg"].sum()
    assert half.period.purchases.co2e_t("t CO2e (IPCC AR6 GWP100)") * 1000 == pytest.approx(jan * 16 / 31, rel=1e-12)


def test_demo_second_year_shows_the_change_of_practice(demo, demo_purchases):
    r = build_report(
        demo.cases,
        parse_period("2026"),
        parse_period("2025"),
        purchases=demo_purchases,
        target=parse_target("-5%/year"),
    )
    f0, f1 = r.baseline.figures, r.period.figures
    assert f1["fgf_l_min"] < f0["fgf_l_min"]
    assert f1["agent_hours"]["desflurane"] < 0.5 * f0["agent_hours"]["desflurane"]
    assert r.decomposition.contribution("agent mix") < 0 and r.decomposition.contribution("intensity") < 0
    assert r.decomposition.by_factor["contribution_kg"].sum() == pytest.approx(r.decomposition.change_kg, rel=1e-12)
    gap = r.period.use_vs_purchase.set_index("item").loc["nitrous_oxide", "gap_kg"]
    second_half = build_report(demo.cases, parse_period("2026-07-01..2026-12-31"), purchases=demo_purchases)
    first_half = build_report(demo.cases, parse_period("2026-01-01..2026-06-30"), purchases=demo_purchases)
    share = lambda rep: rep.period.use_vs_purchase.set_index("item").loc["nitrous_oxide", "gap_share"]  # noqa: E731
    assert gap > 0 and share(second_half) < share(first_half) / 2  # pipework mended from July
    assert r.target.on_track
    assert f1["absorbent_kg"] > 0 and "CO2 absorbent" in set(r.figures_table()["figure"])
    assert "down" in r.headline() and "t CO2e" in r.headline()
    assert [f for f, _ in r.sentences()] == list(FACTORS)


# ---- sites and purchases ------------------------------------------------------------------

SITES = DEMO / "fernhollow_sites.csv"
AR6 = "t CO2e (IPCC AR6 GWP100)"
_ITEM_UNITS = {"sevoflurane": "mL", "desflurane": "mL", "isoflurane": "mL", "nitrous_oxide": "L", "oxygen": "L"}


def test_the_demo_purchases_name_the_sites_of_the_demo_site_file(demo_purchases):
    assert set(demo_purchases["site"]) == set(read_sites(SITES).values()) | {""}
    # Oxygen comes from the invented hospital's bulk supply: the only item bought for no site.
    assert set(demo_purchases.loc[demo_purchases["site"] == "", "item"]) == {"oxygen"}


def test_purchase_based_by_site_adds_up_to_the_whole_and_each_site_is_its_own_lines(demo, demo_purchases):
    from model.reference import DEFAULT_REFERENCE
    from model.report.figures import purchase_figures

    sites = read_sites(SITES)
    r = build_report(demo.cases, parse_period("2026"), parse_period("2025"), purchases=demo_purchases, sites=sites)
    bare = demo_purchases.drop(columns="site")
    for pr, year in ((r.period, "2026"), (r.baseline, "2025")):
        t = pr.use_vs_purchase_by_site.set_index("site")
        assert list(t.index) == ["Day surgery unit", "East wing", "Main theatres", "no site"]
        # The totals over the sites are the whole-set totals; the purchase-based whole is the audit
        # layer's purchase_emissions over the year's months (checked against GWP tables in test_purchases).
        assert t["use_based_t_co2e"].sum() == pytest.approx(pr.co2e_t, rel=1e-12)
        pe = purchase_emissions(bare)
        whole = pe.loc[pe["month"].str.startswith(year), "co2e_kg"].sum() / 1000.0
        assert t["purchase_based_t_co2e"].sum() == pytest.approx(whole, rel=1e-12)
        assert pr.purchases.co2e_t(AR6) == pytest.approx(whole, rel=1e-12)
        assert pr.purchases.by_site[AR6].sum() == pytest.approx(whole, rel=1e-12)
        use = pr.by_site.set_index("site")["t_co2e"]
        for site in sorted(set(sites.values())):
            own = bare[demo_purchases["site"] == site]
            expected = purchase_figures(own, pr.period, DEFAULT_REFERENCE, pr.gwp_sources).co2e_t(AR6)
            assert expected > 0 and t.loc[site, "purchase_based_t_co2e"] == pytest.approx(expected, rel=1e-12)
            assert t.loc[site, "use_based_t_co2e"] == pytest.approx(use[site], rel=1e-12)
            assert t.loc[site, "gap_t_co2e"] == pytest.approx(expected - use[site], rel=1e-12)
            assert t.loc[site, "gap_share"] == pytest.approx((expected - use[site]) / expected, rel=1e-12)
            assert t.loc[site, "note"] == ""
        # The oxygen bought for no site is shown as such (no CO2e, not dropped).
        assert t.loc["no site", "note"] == "purchases with no site"
        assert t.loc["no site", "purchase_based_t_co2e"] == 0 and t.loc["no site", "use_based_t_co2e"] == 0
    # Choosing a site: its purchases only, equal to its row of the whole report.
    one = build_report(
        demo.cases, parse_period("2026"), purchases=demo_purchases, sites=sites, chosen_sites=["East wing"]
    )
    east = r.period.use_vs_purchase_by_site.set_index("site").loc["East wing"]
    assert one.period.purchases.co2e_t(AR6) == pytest.approx(east["purchase_based_t_co2e"], rel=1e-12)
    assert one.period.use_vs_purchase_by_site["site"].tolist() == ["East wing"]
    scope = [c for c in one.cautions if "chosen sites' purchases only" in c]
    left_out = r.period.purchases.co2e_t(AR6) - east["purchase_based_t_co2e"]
    assert len(scope) == 1 and f"{left_out:,.1f} t CO2e" in scope[0]
    assert not any("for all sites" in c for c in one.cautions)
    from model.present.report_document import report_inputs

    assert report_inputs(one)["purchase-based figures cover"] == "the chosen sites' purchases"
    assert report_inputs(r)["basis"].endswith(", by site") and "purchase-based figures cover" not in report_inputs(r)
    # The use-against-purchases table by item is of East wing's purchases too.
    assert one.period.use_vs_purchase["purchase_t_co2e"].sum() == pytest.approx(
        east["purchase_based_t_co2e"], rel=1e-12
    )


def test_purchases_without_a_site_column_give_the_figures_they_gave_before(demo, demo_purchases, tmp_path):
    bare_files = []
    for path in PURCHASES:  # the demo files with their site column (the last) taken out
        lines = path.read_text(encoding="utf-8").splitlines()
        out = tmp_path / path.name
        out.write_text(
            "\n".join(line if line.startswith("#") else line.rsplit(",", 1)[0] for line in lines) + "\n",
            encoding="utf-8",
        )
        bare_files.append(out)
    bare = pd.concat([load_purchases(p).table for p in bare_files], ignore_index=True)
    assert list(bare.columns) == ["month", "item", "amount", "unit"]
    sites = read_sites(SITES)
    r0 = build_report(demo.cases, parse_period("2026"), parse_period("2025"), purchases=bare, sites=sites)
    r1 = build_report(demo.cases, parse_period("2026"), parse_period("2025"), purchases=demo_purchases, sites=sites)
    for a, b in ((r0.period, r1.period), (r0.baseline, r1.baseline)):
        assert a.purchases.by_site is None and a.use_vs_purchase_by_site is None
        pd.testing.assert_frame_equal(a.purchases.by_item, b.purchases.by_item, rtol=1e-12)
        pd.testing.assert_frame_equal(a.use_vs_purchase, b.use_vs_purchase, rtol=1e-12)
    # Against the audit layer directly (the path the figures took before sites existed).
    pe = purchase_emissions(bare)
    got = r0.period.purchases.by_item.set_index("item")["mass_kg"]
    assert got.to_dict() == pytest.approx(
        pe[pe["month"].str.startswith("2026")].groupby("item")["mass_kg"].sum().to_dict(), rel=1e-12
    )
    assert "Use and purchases by site" not in r0.tables() and "Use and purchases by site" in r1.tables()
    d = r0.to_dict()["period"]
    assert d["use_and_purchases_by_site"] is None and d["purchase_based_by_site"] is None
    # A site chosen: the purchase-based figures stay those of all sites, and the report says so plainly.
    one = build_report(demo.cases, parse_period("2026"), purchases=bare, sites=sites, chosen_sites=["East wing"])
    assert one.period.purchases.co2e_t(AR6) == pytest.approx(r0.period.purchases.co2e_t(AR6), rel=1e-12)
    assert any("purchase-based figures are for all sites" in c for c in one.cautions)
    assert one.period.purchase_scope in one.cautions
    from model.present.report_document import report_inputs

    assert report_inputs(one)["purchase-based figures cover"] == "all sites (the purchases name no site)"


def test_sites_only_the_purchases_name_and_purchases_without_a_site_are_shown_as_such(demo):
    from model.reference import DEFAULT_REFERENCE
    from model.report.figures import SITE_NOTES

    d = DEFAULT_REFERENCE.agents["desflurane"]
    bought = pd.DataFrame(
        [
            ("2026-03", "desflurane", d.bottle_volume, "mL", "East wing"),
            ("2026-03", "nitrous_oxide", 546.5, "L", " east WING "),  # the same site
            ("2026-03", "sevoflurane", 500.0, "mL", "Nowhere"),
            ("2026-03", "isoflurane", 250.0, "mL", ""),
            ("2026-04", "isoflurane", 250.0, "mL", None),
        ],  # outside the period
        columns=["month", "item", "amount", "unit", "site"],
    )
    r = build_report(demo.cases, parse_period("2026-03"), purchases=bought, sites=read_sites(SITES))
    t = r.period.use_vs_purchase_by_site.set_index("site")
    assert list(t.index) == ["Day surgery unit", "East wing", "Main theatres", "Nowhere", "no site"]
    assert (
        t.loc["Nowhere", "note"] == SITE_NOTES["purchases only"] and t.loc["no site", "note"] == SITE_NOTES["no site"]
    )
    # Source: globalwarmingpotentials (PyPI), IPCC AR6 GWP100 of HFE-236ea2 (desflurane) and N2O; 546.5 L of N2O
    # at 20 degC and 101.325 kPa is 1 kg (ideal gas law, CODATA 2018 R; as in test_purchases).
    east = (
        d.bottle_volume * d.liquid_density / 1000 * gwp_tables.data["AR6GWP100"]["HFE236ea2"]
        + gwp_tables.data["AR6GWP100"]["N2O"]
    ) / 1000.0
    assert t.loc["East wing", "purchase_based_t_co2e"] == pytest.approx(east, rel=1e-3)
    assert t.loc["Nowhere", "use_based_t_co2e"] == 0 and t.loc["Nowhere", "gap_share"] == 1.0
    assert math.isnan(t.loc["Day surgery unit", "gap_share"])  # nothing bought: no share
    assert t["purchase_based_t_co2e"].sum() == pytest.approx(r.period.purchases.co2e_t(AR6), rel=1e-12)
    assert t["use_based_t_co2e"].sum() == pytest.approx(r.period.co2e_t, rel=1e-12)
    assert any("Nowhere" in c and "misspelling" in c for c in r.cautions)
    assert any("Purchases with no site" in c for c in r.cautions)


_PURCHASE_LINE = st.tuples(
    st.sampled_from(["2025-12", "2026-01", "2026-02", "2026-03"]),
    st.sampled_from(sorted(_ITEM_UNITS)),
    st.floats(0, 1e5, allow_nan=False),
    st.sampled_from(["Alder", "alder ", "Birch", "Elsewhere", "ELSEWHERE", "", None]),
)


@pytest.mark.slow
@settings(max_examples=150, deadline=None)
@given(
    lines=st.lists(_PURCHASE_LINE, max_size=30),
    period=st.sampled_from(["2026-01", "2026Q1", "2026-01-10..2026-02-03", "2025"]),
)
def test_purchase_based_by_site_sums_to_the_whole_for_any_purchases(lines, period):
    from model.reference import DEFAULT_REFERENCE
    from model.report.figures import NO_SITE, match_purchase_sites, purchase_figures, sites_against_purchases

    ref, sources = DEFAULT_REFERENCE, ("ar6_gwp100", "ar5_gwp100")
    table = pd.DataFrame(
        [(m, i, a, _ITEM_UNITS[i], s) for m, i, a, s in lines], columns=["month", "item", "amount", "unit", "site"]
    )
    p = parse_period(period)
    table["site"] = match_purchase_sites(table["site"], ["Alder", "Birch"]) if len(table) else []
    by = purchase_figures(table, p, ref, sources, by_site=True)
    whole = purchase_figures(table.drop(columns="site"), p, ref, sources)
    assert whole.by_site is None
    for label in (AR6, "t CO2e (IPCC AR5 GWP100)"):
        assert by.by_site[label].sum() == pytest.approx(whole.co2e_t(label), rel=1e-9, abs=1e-12)
        for site, value in zip(by.by_site["site"], by.by_site[label], strict=True):
            own = purchase_figures(table[table["site"] == site].drop(columns="site"), p, ref, sources)
            assert value == pytest.approx(own.co2e_t(label), rel=1e-12, abs=1e-15)
    # Spellings of a known site ignoring case and spaces are that site; of an unknown one, one site.
    assert set(by.by_site["site"]) <= {"Alder", "Birch", "Elsewhere", "ELSEWHERE", NO_SITE}
    assert not {"Elsewhere", "ELSEWHERE"} <= set(by.by_site["site"])
    use = pd.DataFrame({"site": ["Alder", "Birch"], "t_co2e": [1.5, 0.0]})
    side = sites_against_purchases(use, by, ref, "ar6_gwp100", ["Alder", "Birch"])
    assert side["use_based_t_co2e"].sum() == pytest.approx(1.5)
    assert side["purchase_based_t_co2e"].sum() == pytest.approx(whole.co2e_t(AR6), rel=1e-9, abs=1e-12)
    assert (side["gap_t_co2e"] == side["purchase_based_t_co2e"] - side["use_based_t_co2e"]).all()


# ---- target ------------------------------------------------------------------------------


def test_target_paths():
    base = parse_period("2025")
    # Common practice, no source: x % a year compounds; a tonnage by a year is reached in that year.
    assert float(target_path_t(parse_target("-5%/year"), base, 100.0, 2026.5)) == pytest.approx(95.0)
    assert float(target_path_t(parse_target("-5 % per year"), base, 100.0, 2027.5)) == pytest.approx(90.25)
    assert float(target_path_t(parse_target("120 t by 2030"), base, 170.0, 2026.5)) == pytest.approx(160.0)
    assert float(target_path_t(parse_target("120 t by 2030"), base, 170.0, 2032.5)) == pytest.approx(120.0)
    for bad in ("-5%", "5 percent", "120 by 2030", "-150%/year"):
        with pytest.raises(InputError, match="^--target: got"):
            parse_target(bad, "--target")


def test_a_quarter_is_compared_with_the_path_as_an_annual_rate(demo):
    r = build_report(demo.cases, parse_period("2026Q2"), parse_period("2025"), target=parse_target("-5%/year"))
    assert r.target.actual_t_per_year == pytest.approx(r.period.co2e_t * 4, rel=1e-12)
    assert any("differ in length" in c for c in r.cautions)


# ---- bad input: one message, nothing computed lost --------------------------------------


def test_a_baseline_without_cases_is_reported_and_the_period_stands(demo):
    r = build_report(demo.cases, parse_period("2026"), parse_period("2019"), target=parse_target("-5%/year"))
    assert r.baseline is None and r.decomposition is None
    assert len(r.problems) == 1
    msg = str(r.problems[0])
    assert msg.startswith("baseline: got '2019'") and "2025-01" in msg and "2026-12" in msg
    assert r.period.co2e_t > 0 and "t CO2e" in r.headline()


def test_a_site_file_naming_unknown_theatres_is_one_message_and_the_report_stands(demo):
    sites = parse_sites("theatre,site\nAlder,Main\nAlderr,Main\nZebra,East\n", "sites.csv")
    with pytest.raises(InputError) as err:
        assign_sites(demo.cases["theatre"], sites, "sites.csv")
    assert "Alderr, Zebra" in str(err.value) and "Birch" in str(err.value)
    r = build_report(demo.cases, parse_period("2026"), sites=sites)
    assert len(r.problems) == 1 and "Alderr" in str(r.problems[0])
    assert r.period.co2e_t > 0


def test_site_file_format():
    text = "# our sites\n\ntheatre,site\n alder , Main theatres\nDAY UNIT 1,Day unit\n# end\n"
    sites = parse_sites(text, "s.csv")
    assert sites == {"alder": "Main theatres", "DAY UNIT 1": "Day unit"}
    out = assign_sites(["Alder", "Day Unit 1", "Birch"], sites)
    assert list(out) == ["Main theatres", "Day unit", "unassigned"]
    for bad, where in (
        ("site,theatre\nA,B\n", "line 1"),
        ("theatre,site\nA\n", "line 2"),
        ("theatre,site\nA,X\na,Y\n", "line 3"),
        ("theatre,site\n,X\n", "line 2"),
        ("# only\n", "s.csv"),
        # The report's own rows' names (common practice, no source: ours).
        ("theatre,site\nA,X\nB, No Site\n", "line 3"),
        ("theatre,site\nA,Unassigned\n", "line 2"),
    ):
        with pytest.raises(InputError, match=where):
            parse_sites(bad, "s.csv")


@settings(max_examples=200, deadline=None)
@given(st.text(max_size=200))
def test_period_target_and_site_parsers_give_a_result_or_an_input_error(text):
    for parse in (parse_period, parse_target, parse_sites):
        try:
            parse(text)
        except InputError:
            pass


# ---- command line -----------------------------------------------------------------------


def _cli(args, capsys):
    from model.cli import main

    code = main(["report", *[str(a) for a in args]])
    out, err = capsys.readouterr()
    return code, out, err


def test_cli_report_json_and_files(tmp_path, capsys):
    code, out, err = _cli(
        [
            *YEARS,
            "--purchases",
            PURCHASES[0],
            "--purchases",
            PURCHASES[1],
            "--period",
            "2026",
            "--baseline",
            "2025",
            "--target",
            "-5%/year",
            "--sites",
            DEMO / "fernhollow_sites.csv",
            "--json",
            "--html",
            tmp_path / "r.html",
            "--xlsx",
            tmp_path / "r.xlsx",
        ],
        capsys,
    )
    assert code == 0, err
    data = json.loads(out)
    assert data["target"]["on_track"] is True
    parts = data["change"]["by_factor_t_co2e"]
    assert sum(parts.values()) == pytest.approx(data["change"]["t_co2e"], rel=1e-9)
    assert set(data["period"]["t_co2e"]) == {"ar6_gwp100", "ar5_gwp100"}
    html = (tmp_path / "r.html").read_text(encoding="utf-8")
    assert data["headline"].split(":")[0] in html and "Method statement" in html
    import openpyxl

    wb = openpyxl.load_workbook(tmp_path / "r.xlsx")
    assert {"Figures", "By agent", "What drove the change", "Notes"} <= set(wb.sheetnames)


def test_cli_report_json_html_and_xlsx_carry_use_and_purchases_by_site(tmp_path, capsys):
    bad = tmp_path / "bad_site.csv"  # one line with a tab in its site: set aside, the other used
    bad.write_text(
        'month,item,quantity,unit,size,site\n2026-05,sevoflurane,1,bottle,,"East\twing"\n'
        "2026-05,sevoflurane,2,bottle,,East wing\n",
        encoding="utf-8",
    )
    args = [
        *YEARS,
        "--purchases",
        PURCHASES[0],
        "--purchases",
        PURCHASES[1],
        "--purchases",
        bad,
        "--period",
        "2026",
        "--baseline",
        "2025",
        "--sites",
        SITES,
    ]
    code, out, err = _cli([*args, "--json", "--html", tmp_path / "r.html", "--xlsx", tmp_path / "r.xlsx"], capsys)
    assert code == 0, err
    data = json.loads(out)
    rows = {r["site"]: r for r in data["period"]["use_and_purchases_by_site"]}
    assert list(rows) == ["Day surgery unit", "East wing", "Main theatres", "no site"]
    assert set(rows["East wing"]) == {
        "site",
        "note",
        "use_based_t_co2e",
        "purchase_based_t_co2e",
        "gap_t_co2e",
        "gap_share",
    }
    assert sum(r["use_based_t_co2e"] for r in rows.values()) == pytest.approx(
        data["period"]["t_co2e"]["ar6_gwp100"], rel=1e-9
    )
    bought = sum(r[AR6] for r in data["period"]["purchase_based"])
    assert sum(r["purchase_based_t_co2e"] for r in rows.values()) == pytest.approx(bought, rel=1e-9)
    assert {r["site"] for r in data["period"]["purchase_based_by_site"]} == set(rows)
    assert data["baseline"]["use_and_purchases_by_site"] is not None and data["period"]["purchase_scope"] is None
    assert len(data["purchase_lines_set_aside"]) == 1
    assert data["purchase_lines_set_aside"][0].startswith(f"{bad}, line 2: site: got 'East\\twing'")
    # The two good bottles count for East wing: its row is the demo's plus them.
    code, out, err = _cli([*args[:6], *args[8:], "--json"], capsys)
    plain = {r["site"]: r for r in json.loads(out)["period"]["use_and_purchases_by_site"]}
    sevo = DEFAULT_REFERENCE.agents["sevoflurane"]
    two = 2 * sevo.bottle_volume * sevo.liquid_density / 1e6 * DEFAULT_REFERENCE.gwp("sevoflurane", "ar6_gwp100")
    assert rows["East wing"]["purchase_based_t_co2e"] == pytest.approx(
        plain["East wing"]["purchase_based_t_co2e"] + two, rel=1e-9
    )
    html = (tmp_path / "r.html").read_text(encoding="utf-8")
    assert "<h2>Use and purchases by site</h2>" in html and "purchases with no site" in html
    import openpyxl

    ws = openpyxl.load_workbook(tmp_path / "r.xlsx")["Use and purchases by site"]
    assert [c.value for c in ws[1]] == [
        "site",
        "note",
        "use_based_t_co2e",
        "purchase_based_t_co2e",
        "gap_t_co2e",
        "gap_share",
    ]
    # The text output prints the table; one site chosen, its purchases only and a caution that says so.
    code, out, err = _cli([*args, "--site", "East wing"], capsys)
    assert code == 0, err
    assert "Use-based against purchase-based by site" in out and "chosen sites' purchases only (East wing)" in out


def test_cli_report_html_carries_the_report_charts(tmp_path, capsys, monkeypatch):
    """``--html`` writes the charts of the Emissions report page's download, offline.

    The charts come from the same builders (model.present.report_charts, which the page
    reads through model.present.report_charts), into a file that opens offline.
    """
    import model.present.report_charts as report_charts

    made = []

    def recording(report):
        made.append(report_charts.report_figures.__wrapped__(report))
        return made[-1]

    recording.__wrapped__ = report_charts.report_figures
    monkeypatch.setattr(report_charts, "report_figures", recording)
    code, out, err = _cli(
        [
            *YEARS,
            "--purchases",
            PURCHASES[0],
            "--purchases",
            PURCHASES[1],
            "--period",
            "2026",
            "--baseline",
            "2025",
            "--target",
            "-5%/year",
            "--sites",
            DEMO / "fernhollow_sites.csv",
            "--html",
            tmp_path / "r.html",
        ],
        capsys,
    )
    assert code == 0, err
    html = (tmp_path / "r.html").read_text(encoding="utf-8")
    assert len(made) == 1
    figures = made[0]
    # Baseline, purchases and target given: every chart of the report applies.
    assert list(figures) == [
        "What drove the change",
        "Emissions by agent",
        "Emissions by month",
        "Time in each flow band",
        "Use-based and purchase-based",
        "Against the target path",
    ]
    assert html.count('class="plotly-graph-div"') == len(figures)
    for heading, fig in figures.items():
        assert f"<h2>{heading}</h2>" in html and fig.layout.title.text in html
    assert "What drove the change (additive LMDI-I)" in html
    # Self-contained: plotly.js inlined once, no script fetched from elsewhere.
    assert html.count("plotly.js v") == 1 and not re.search(r"<script[^>]*\ssrc=", html)


def test_cli_report_bad_input_exits_2_with_one_line(capsys):
    code, out, err = _cli([YEARS[1], "--period", "2026H1"], capsys)
    assert code == 2 and err.count("\n") == 1 and "--period" in err and "FY2026-04" in err
    # A baseline outside the records: the period's report is printed, then one line.
    code, out, err = _cli([YEARS[1], "--period", "2026", "--baseline", "2019"], capsys)
    assert code == 2 and err.count("\n") == 1 and "--baseline: got '2019'" in err
    assert "Scope 1 anaesthetic emissions, calendar year 2026" in out


def test_cli_report_site_file_naming_an_unknown_theatre_is_one_line_after_the_report(tmp_path, capsys):
    sites = tmp_path / "sites.csv"
    sites.write_text("# misspelt\ntheatre,site\nAlder,Main\nAldre,Main\n", encoding="utf-8")
    code, out, err = _cli([YEARS[1], "--period", "2026Q1", "--sites", sites], capsys)
    assert code == 2 and err.count("\n") == 1 and "Aldre" in err and "Birch" in err
    assert "calendar year" not in err and "2026 quarter 1" in out


def test_report_documents_escape_user_text_and_neutralise_formula_cells(demo, tmp_path):
    import openpyxl

    from model.present.report_document import report_html, report_xlsx

    hostile = {"Alder": "<b>Main</b>", "Birch": '=HYPERLINK("x")'}
    r = build_report(demo.cases, parse_period("2026Q1"), parse_period("2025Q1"), sites=hostile)
    doc = report_html(r)
    assert "&lt;b&gt;Main&lt;/b&gt;" in doc and "<b>Main</b>" not in doc
    assert doc.index("id='headline'") < doc.index("<h2>Figures</h2>") < doc.index("<h2>Method statement</h2>")
    path = tmp_path / "r.xlsx"
    path.write_bytes(report_xlsx(r))
    ws = openpyxl.load_workbook(path)["By site"]
    # OWASP "CSV injection" advice (common practice): a formula from a user file stays text.
    assert '\'=HYPERLINK("x")' in [c.value for c in ws["A"]]


# ---- a period with no anaesthetic hours ----------------------------------------------------

_ONE_SAMPLE = """case_id,time,theatre,agent,o2,air,n2o,dial
A1,2025-03-02T08:00:00,Alder,sevoflurane,1,1,0,2
B1,2026-03-02T08:00:00,Alder,sevoflurane,1,1,0,2
B1,2026-03-02T08:01:00,Alder,sevoflurane,1,1,0.5,2
B1,2026-03-02T08:02:00,Alder,sevoflurane,1,1,0.5,2
"""
_NAN_WORD = re.compile(r"(?<![A-Za-z])(nan|inf)(?![A-Za-z])", re.IGNORECASE)


@pytest.mark.parametrize("period, baseline, empty", [("2026", "2025", "the baseline"), ("2025", "2026", "the period")])
def test_a_period_without_anaesthetic_hours_says_why_a_figure_is_missing(tmp_path, period, baseline, empty):
    # A case of one sample has no minutes (the time between samples is what is counted,
    # docs/methods.md): figures per hour and per minute of such a period do not exist.
    path = tmp_path / "r.csv"
    path.write_text(_ONE_SAMPLE, encoding="utf-8")
    cases = audit_records([path]).cases
    r = build_report(cases, parse_period(period), parse_period(baseline))
    text = " ".join([r.headline(), *(s for _, s in r.sentences())])
    assert not _NAN_WORD.search(text), text
    assert f"{empty} has no anaesthetic hours" in text
    if empty == "the baseline":
        assert "cannot be given as a percentage: the baseline has no anaesthetic hours" in r.headline()
    flow = dict(r.sentences())["intensity"]
    assert "time-weighted fresh gas flow cannot be worked out" in flow
    assert "nitrous oxide per anaesthetic hour cannot be worked out" in dict(r.sentences())["N2O use"]


def test_a_baseline_of_next_to_no_emissions_gives_no_infinite_percentage(tmp_path):
    # Found by tests/model/report/test_report_fuzz.py: a baseline of 1e-310 L/min N2O emits
    # some 1e-313 t, and the period's tonnes over it overflow to "up inf%".
    rows = ["case_id,time,theatre,agent,o2,air,n2o,dial"]
    for case, year, n2o, dial in (("A", 2025, "1e-310", "0"), ("B", 2026, "0", "2")):
        rows += [f"{case},{year}-03-02T08:{m:02d}:00,Alder,sevoflurane,1,0,{n2o},{dial}" for m in range(12)]
    path = tmp_path / "r.csv"
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")
    r = build_report(audit_records([path]).cases, parse_period("2026"), parse_period("2025"))
    assert 0 < r.baseline.co2e_t < 1e-300
    assert not _NAN_WORD.search(r.headline()), r.headline()
    assert "cannot be given as a percentage: the baseline has emissions too small to compare with" in r.headline()


def test_cli_report_files_say_what_made_them(tmp_path, capsys):
    """The workbook and the HTML of ``gas-ledger report`` carry the one provenance block."""
    import hashlib

    from model.cli import main
    from model.present.provenance import program_version
    from tests.model.present.test_provenance import html_block, xlsx_block

    settings = ROOT / "demo_data" / "settings.toml"
    args = ["--settings", settings, "report", *YEARS, "--purchases", PURCHASES[0], "--purchases", PURCHASES[1]]
    args += ["--sites", SITES, "--period", "2026", "--baseline", "2025"]
    code = main([str(a) for a in [*args, "--html", tmp_path / "r.html", "--xlsx", tmp_path / "r.xlsx"]])
    capsys.readouterr()
    assert code == 0
    rows = xlsx_block((tmp_path / "r.xlsx").read_bytes())
    assert html_block((tmp_path / "r.html").read_text(encoding="utf-8")) == rows
    values = dict(rows)
    assert values["program"] == f"Fresh Gas Ledger {program_version()}"
    inputs = [v for n, v in rows if n.startswith("input: ")]
    for path in [*YEARS, *PURCHASES, SITES, settings]:
        # Source: FIPS 180-4 (SHA-256), as Python's hashlib computes it.
        digest = hashlib.sha256(path.read_bytes()).hexdigest()
        assert any(v.startswith(str(path)) and digest in v for v in inputs), (path, inputs)
    assert any(" rows; " in v for v in inputs)
    assert str(settings) in values["prices in use"]


def test_a_headline_across_gwp_sources_states_the_like_for_like_change_first_and_the_source_effect_beside_it(demo):
    """Baseline 2025 under AR5, period 2026 under AR6: the practice change is not mixed with the source."""
    r = build_report(
        demo.cases,
        parse_period("2026"),
        parse_period("2025"),
        gwp_source="ar6_gwp100",
        baseline_gwp_source="ar5_gwp100",
    )
    b = r.baseline
    like = b.figures["co2e_t"]["ar6_gwp100"]
    # Common practice, no source: a like-for-like change holds the conversion factors fixed.
    change = r.period.co2e_t / like - 1.0
    head = r.headline()
    word = "down" if change < 0 else "up"
    first = f", {word} {abs(change) * 100:.0f} % on calendar year 2025 like for like "
    first += f"({like:,.1f} t, both under IPCC AR6 GWP100)"
    assert first in head, head
    effect = like - b.co2e_t
    assert r.source_effect_t() == pytest.approx(effect)
    assert f"IPCC AR5 GWP100 ({b.co2e_t:,.1f} t)" in head and f"{abs(effect):,.1f} t" in head
    assert head.index("like for like") < head.index("change of GWP source")
    # The two parts add to the change between the figures as given.
    assert (r.period.co2e_t - like) + effect == pytest.approx(r.period.co2e_t - b.co2e_t)
    same = build_report(demo.cases, parse_period("2026"), parse_period("2025"))
    assert "like for like" not in same.headline() and same.source_effect_t() == 0.0
