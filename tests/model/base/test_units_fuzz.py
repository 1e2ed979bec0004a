"""Quantities with powers are refused without being evaluated (found by fuzzing)."""

from pathlib import Path

from model import parse_plan_text
from tests.helpers.plan_fuzz import _only_input_error

ROOT = Path(__file__).resolve().parents[3]


DEMO_PLAN = (ROOT / "demo_data" / "plans" / "lap_chole_low_flow.toml").read_text()


def test_power_in_a_quantity_is_refused_without_evaluating_it():
    # Found by fuzzing: pint evaluates powers exactly, so "9**9**9" held the parser for hours
    # and "10**400" overflowed float conversion. Both are now an InputError at once.
    for flow in ("9**9**9 L/min", "9^9^9", "10**400", "10**400 D"):
        text = DEMO_PLAN.replace('o2 = "0.3 L/min"', f'o2 = "{flow}"', 1)
        assert text != DEMO_PLAN
        assert _only_input_error(parse_plan_text, text, "power.toml") is None
