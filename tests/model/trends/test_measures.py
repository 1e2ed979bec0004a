"""Monthly measures equal the record audit's and the emissions report's figures for the same months."""

import numpy as np
import pytest

from model.audit import audit_records
from model.base.errors import InputError
from model.reference import DEFAULT_GWP, DEFAULT_REFERENCE
from model.report.figures import cases_in, use_figures
from model.report.periods import parse_period
from model.trends import monthly_measures

DEMO = "demo_data/records/fernhollow_2025.parquet"


@pytest.fixture(scope="module")
def audit():
    return audit_records([DEMO])


def test_department_months_equal_the_audit_by_month(audit):
    m = monthly_measures(audit.cases)
    by = audit.by("month")
    by = by[by["month"] != "unknown"].reset_index(drop=True)
    assert list(m["month"]) == list(by["month"])
    np.testing.assert_allclose(m["co2e_t"] * 1000, by["co2e_total_kg"], rtol=1e-12)
    np.testing.assert_allclose(m["co2e_kg_per_case"], by["co2e_kg_per_case"], rtol=1e-12)
    np.testing.assert_allclose(m["time_weighted_fgf_l_min"], by["time_weighted_fgf_l_min"], rtol=1e-12)
    assert list(m["cases"]) == list(by["cases"])


@pytest.mark.parametrize("month", ["2025-03", "2025-11"])
def test_a_month_equals_the_report_figures(audit, month):
    """The report's use figures (model.report.figures.use_figures) for a one-month period."""
    m = monthly_measures(audit.cases).set_index("month").loc[month]
    f = use_figures(cases_in(audit.cases, parse_period(month)), DEFAULT_REFERENCE, [DEFAULT_GWP])
    assert m["cases"] == f["cases"]
    assert m["co2e_t"] == pytest.approx(f["co2e_t"][DEFAULT_GWP], rel=1e-9)
    assert m["co2e_kg_per_case"] == pytest.approx(f["kg_per_case"], rel=1e-9)
    assert m["co2e_kg_per_hour"] == pytest.approx(f["kg_per_hour"], rel=1e-9)
    assert m["time_weighted_fgf_l_min"] == pytest.approx(f["fgf_l_min"], rel=1e-12)
    assert m["nitrous_oxide_l_per_case"] == pytest.approx(f["n2o_l_per_case"], rel=1e-12)
    share = f["band_share"]
    assert m["share_at_or_under_1_l_min"] == pytest.approx(share["metabolic"] + share["minimal"] + share["low"])
    assert m["share_at_or_under_0_5_l_min"] == pytest.approx(share["metabolic"] + share["minimal"])
    hours = f["hours"]
    for agent, h in f["agent_hours"].items():
        assert m[f"share_{agent}"] == pytest.approx(h / hours)


def test_theatres_add_up_to_the_department(audit):
    d = monthly_measures(audit.cases)
    t = monthly_measures(audit.cases, "theatre")
    assert set(t["group"]) == set(audit.cases["theatre"])
    summed = t.groupby("month")["co2e_t"].sum()
    np.testing.assert_allclose(summed.to_numpy(), d["co2e_t"].to_numpy(), rtol=1e-12)
    # agent shares of one row sum to one (every counted minute has one agent, "none" included)
    shares = t.filter(like="share_").drop(columns=["share_at_or_under_1_l_min", "share_at_or_under_0_5_l_min"])
    np.testing.assert_allclose(shares.sum(axis=1), 1.0)


def test_sites_group_theatres(audit):
    theatres = sorted(set(audit.cases["theatre"]))
    sites = {t: ("North" if i % 2 else "South") for i, t in enumerate(theatres)}
    s = monthly_measures(audit.cases, "site", sites)
    assert set(s["group"]) == {"North", "South"}


def test_bad_level_is_a_message():
    with pytest.raises(InputError, match="level"):
        monthly_measures(audit_records([DEMO]).cases.head(0), "ward")
