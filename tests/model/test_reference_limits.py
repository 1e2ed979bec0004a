"""Prices, GWP values and month weights have upper bounds: an absurd value is refused naming its field."""

from __future__ import annotations

from pathlib import Path

import pytest

from model.base.errors import InputError

ROOT = Path(__file__).resolve().parents[2]


def test_prices_and_month_weights_have_upper_bounds(tmp_path):
    from model.reference import MAX_PRICE, Reference

    with pytest.raises(InputError, match="at most"):
        Reference().with_overrides({"prices": {"oxygen_per_1000_l": MAX_PRICE * 10}}, "settings")
    with pytest.raises(InputError, match="at most"):
        Reference().with_overrides({"prices": {"bottle": {"sevoflurane": 1e308}}}, "settings")
    assert (
        Reference().with_overrides({"prices": {"oxygen_per_1000_l": MAX_PRICE}}, "s").prices.oxygen_per_1000_l
        == MAX_PRICE
    )
    with pytest.raises(InputError, match="GWP"):
        Reference().with_overrides({"gwp": {"user": {"sevoflurane": 1e308}}}, "settings")
    from model.io.scenario import parse_scenario_text

    text = (ROOT / "demo_data" / "year" / "baseline_2l.toml").read_text()
    assert "[calendar]" not in text
    text += "\n[calendar]\nmonth_weights = [1e308, 1e308, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1]\n"
    with pytest.raises(InputError, match="month_weights"):
        parse_scenario_text(text, "s.toml", ROOT / "demo_data" / "year")
