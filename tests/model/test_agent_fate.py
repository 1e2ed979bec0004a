"""Where a case's agent went (agent_fate) and its cost by item, worked out by the case result."""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import pytest

from model.case import FATE_PARTS, agent_fate, compute_case, cost_by_item
from model.io.plans import load_plan

DEMO = Path(__file__).resolve().parents[2] / "demo_data" / "plans"
PLANS = ["lap_chole_low_flow", "lap_chole_high_flow", "hip_desflurane_n2o"]


def _at_flow(plan, oxygen_l_min, air_l_min):
    """The plan with every phase at the given O2 and air flows."""
    return replace(plan, phases=tuple(replace(p, oxygen_l_min=oxygen_l_min, air_l_min=air_l_min) for p in plan.phases))


@pytest.mark.parametrize("name", PLANS)
@pytest.mark.parametrize("flows", [None, (0.5, 0.0), (1.0, 1.0), (3.0, 3.0)])
def test_the_fate_of_the_agent_conserves_its_mass(name, flows):
    # Source: conservation of mass (common practice): delivered agent = vented + taken up
    # (metabolised part included) + held in the circle, to rounding.
    plan = load_plan(DEMO / f"{name}.toml")
    result = compute_case(plan if flows is None else _at_flow(plan, *flows))
    fate = result.agent_fate()
    assert list(fate["where"]) == list(FATE_PARTS)
    assert (fate["agent_g"] >= 0).all()
    delivered = result.totals["agent_mass_g"]
    assert delivered > 0
    assert float(fate["agent_g"].sum()) == pytest.approx(delivered, rel=1e-9)


def test_the_metabolised_share_is_part_of_the_uptake():
    # Source: conservation of mass (common practice): what the patient metabolises was
    # first taken up; the rest of the uptake is held or exhaled later.
    result = compute_case(load_plan(DEMO / "lap_chole_low_flow.toml"))
    g = dict(zip(result.agent_fate()["where"], result.agent_fate()["agent_g"], strict=True))
    t = result.totals
    assert g["Metabolised"] == pytest.approx(t["agent_metabolised_g"])
    assert g["Taken up by the patient"] + g["Metabolised"] == pytest.approx(t["agent_uptake_g"])


def test_totals_without_the_circle_split_are_balanced_from_the_uptake():
    # Conservation of mass, common practice: vented = delivered - uptake - held.
    fate = agent_fate({"agent_mass_g": 40.0, "agent_uptake_g": 10.0}, metabolised_fraction=0.03)
    g = dict(zip(fate["where"], fate["agent_g"], strict=True))
    assert g == pytest.approx(
        {
            "Vented through the scavenger": 30.0,
            "Taken up by the patient": 9.7,
            "Metabolised": 0.3,
            "Left in the circle": 0.0,
        }
    )
    assert float(fate["agent_g"].sum()) == pytest.approx(40.0)


@pytest.mark.parametrize("name", PLANS)
def test_the_cost_by_item_adds_up_to_the_total(name):
    # Common practice, no source: a case's cost is the sum of its items' costs.
    result = compute_case(load_plan(DEMO / f"{name}.toml"))
    cost = result.cost_by_item()
    assert list(cost.columns) == ["item", f"cost ({result.currency})"]
    assert float(cost.iloc[:, 1].sum()) == pytest.approx(result.totals["cost_total"], rel=1e-12)
    assert cost.equals(cost_by_item(result.totals, result.currency))
