"""The demo plans compute and the command line runs."""

from pathlib import Path

from model import compute_case, load_plan
from model.cli import main

DEMO = Path(__file__).resolve().parents[1] / "demo_data" / "plans"


def test_demo_plans_compute():
    for path in sorted(DEMO.glob("*.toml")):
        result = compute_case(load_plan(path))
        assert result.totals["liquid_agent_ml"] > 0, path.name


def test_low_flow_uses_less_agent_than_high_flow():
    low = compute_case(load_plan(DEMO / "lap_chole_low_flow.toml")).totals
    high = compute_case(load_plan(DEMO / "lap_chole_high_flow.toml")).totals
    assert low["liquid_agent_ml"] < high["liquid_agent_ml"]


def test_cli_case_runs(capsys):
    assert main(["case", str(DEMO / "lap_chole_low_flow.toml")]) == 0
    assert "Liquid agent" in capsys.readouterr().out
