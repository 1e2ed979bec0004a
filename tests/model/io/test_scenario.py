"""Scenario files: the values of each field as typed (units, booleans), beside the fuzz tests."""

from __future__ import annotations

from pathlib import Path

import pint
import pytest

from model.base.errors import InputError
from model.io.scenario import parse_scenario_text

YEAR = Path(__file__).resolve().parents[3] / "demo_data" / "year"
HEAD = 'case_mix = "fernhollow_casemix.csv"\n'


def _scenario(table: str, body: str):
    return parse_scenario_text(f"{HEAD}[{table}]\n{body}\n", "s.toml", YEAR)


@pytest.mark.parametrize(
    "typed", ["0.17", '"0.17"', '"0.17 kg/km"', '"170 g/km"', '"0.17 kg CO2e/km"', '"0.2735 kg/mi"']
)
def test_the_car_factor_is_a_mass_per_distance(typed):
    # Reference: pint (1 kg = 1000 g; 1 mile = 1.609344 km, international mile).
    ureg = pint.UnitRegistry()
    raw = typed.strip('"').replace(" CO2e", "")
    want = ureg.Quantity(raw).to("kg/km").magnitude if " " in raw else float(raw)
    s = _scenario("equivalence", f"car_kg_co2e_per_km = {typed}")
    assert s.car_kg_per_km == pytest.approx(want, rel=1e-12)


@pytest.mark.parametrize("typed", ['"0.2 ppm"', '"17 %"', '"0.17 L/min"'])
def test_a_car_factor_of_another_dimension_is_refused(typed):
    with pytest.raises(InputError, match=r"^s.toml: equivalence.car_kg_co2e_per_km: got .*kg/km"):
        _scenario("equivalence", f"car_kg_co2e_per_km = {typed}")


@pytest.mark.parametrize(
    "field, typed, want",
    [
        # Reference: pint's definitions (percent = 0.01, ppm = 1e-6); a plain number is a fraction.
        ("adherence", '"0.5 percent"', 0.005),
        ("adherence", '"80 %"', 0.8),
        ("adherence", "0.8", 0.8),
        ("maintenance_o2_share", '"500000 ppm"', 0.5),
    ],
)
def test_practice_shares_in_percent_or_ppm_keep_their_meaning(field, typed, want):
    s = _scenario("practice", f"{field} = {typed}")
    got = s.practice.adherence if field == "adherence" else s.practice.maintenance_o2_share
    assert got == pytest.approx(want, rel=1e-12)


@pytest.mark.parametrize(
    "table, body, where",
    [
        # TOML 1.0 (toml.io): true and false are booleans, not the integers 1 and 0.
        ("uncertainty", "draws = true", "uncertainty.draws"),
        ("uncertainty", "seed = true", "uncertainty.seed"),
        ("uncertainty", "seed = false", "uncertainty.seed"),
        ("calendar", "month_weights = [true, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1]", r"calendar.month_weights\[1\]"),
        ("calendar", "month_weights = [31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, false]", r"month_weights\[12\]"),
        ("practice", "dial_factor = true", "practice.dial_factor"),
        ("practice", "adherence = true", "practice.adherence"),
        ("equivalence", "car_kg_co2e_per_km = true", "equivalence.car_kg_co2e_per_km"),
        ("prices", "bottle = { sevoflurane = true }", "prices.bottle.sevoflurane"),
    ],
)
def test_a_boolean_where_a_number_is_due_is_refused_naming_the_field(table, body, where):
    with pytest.raises(InputError, match=rf"^s.toml: .*{where}: got .*(true|false|True|False)"):
        _scenario(table, body)


def test_whole_numbers_still_read_as_before():
    s = _scenario("uncertainty", "draws = 10\nseed = 7")
    assert (s.sampling.draws, s.sampling.seed) == (10, 7)
    s = _scenario("calendar", "month_weights = [1, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1, 2.5]")
    assert s.month_weights == (1.0,) * 11 + (2.5,)
