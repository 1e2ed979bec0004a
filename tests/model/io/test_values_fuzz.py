"""Fuzzed values as hospitals type them (hypothesis): dimensionless units, subnormal and boolean values.

Each odd value goes into one field of a valid plan, scenario or case mix. The invariant: a
result or one InputError; an accepted value is what pint (a registry of its own) makes of it,
a boolean or a unit of another dimension is refused; an accepted plan's output holds no nan
or inf and its liquid agent equals the ideal-gas formula worked out here.
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import pytest
from hypothesis import given
from hypothesis import strategies as st

from model.base.errors import InputError
from model.base.jsonable import infinite_paths
from model.case import compute_case
from model.io.case_mix import parse_case_mix_text
from model.io.plans import load_plan, plan_from_dict
from model.io.scenario import parse_scenario_text
from model.reference import DEFAULT_REFERENCE
from tests.helpers.cli import assert_one_line_error, run
from tests.helpers.fuzz import FUZZ, SLOW, assert_no_non_finite, dimensionless_texts, odd_values, reference_value, tiny

ROOT = Path(__file__).resolve().parents[3]
YEAR = ROOT / "demo_data" / "year"

# (where in the plan, the field's base unit, how the model stores it from the base unit)
FIELDS = [
    (("phases", 0, "o2"), "L/min"),
    (("phases", 0, "air"), "L/min"),
    (("phases", 0, "duration"), "min"),
    (("phases", 0, "dial"), "percent"),
    (("settings", "capture_efficiency"), "dimensionless"),
    (("settings", "min_o2_share"), "dimensionless"),
    (("settings", "inspired_o2_floor"), "dimensionless"),
    (("settings", "room_temperature"), "degC"),
    (("patient", "weight"), "kg"),
]


def _plan(path, value) -> dict:
    data = {
        "name": "fuzz",
        "agent": "sevoflurane",
        "patient": {"weight": "70 kg", "age": "40 year"},
        "settings": {},
        "phases": [{"name": "p", "duration": "60 min", "o2": "1 L/min", "air": "1 L/min", "dial": "2 %"}],
    }
    here = data
    for key in path[:-1]:
        here = here[key]
    here[path[-1]] = value
    return data


def _stored(plan, path) -> float:
    """The value the plan holds for ``path``, in the field's base unit."""
    if path[0] == "phases":
        ph = plan.phases[0]
        return {"o2": ph.oxygen_l_min, "air": ph.air_l_min, "duration": ph.minutes, "dial": ph.dial_pct}[path[-1]]
    if path[0] == "patient":
        return plan.patient.weight_kg
    s = plan.settings
    return {
        "capture_efficiency": s.capture_efficiency,
        "min_o2_share": s.min_o2_share,
        "inspired_o2_floor": s.inspired_o2_floor,
        "room_temperature": s.temperature_c,
    }[path[-1]]


def _liquid_ml(plan) -> float:
    """Liquid agent of the dial phases: Dion's formula from the ideal gas law, worked out here.

    Source: Dion P., Can J Anaesth 1992;39:633-4, at the plan's temperature and pressure;
    R = 8.314462618 J/(mol K) (CODATA 2018).
    """
    agent = DEFAULT_REFERENCE.agents[plan.agent]
    s = plan.settings
    molar_volume_l = 8.314462618 * (s.temperature_c + 273.15) / s.pressure_kpa
    vapour_per_ml = agent.liquid_density / agent.molar_mass * molar_volume_l * 1000.0
    return (
        sum(
            (p.oxygen_l_min + p.air_l_min + p.nitrous_oxide_l_min) * 1000.0 * p.dial_pct / 100.0 * p.minutes
            for p in plan.phases
        )
        / vapour_per_ml
    )


@FUZZ
@given(where=st.sampled_from(FIELDS), value=odd_values)
def test_an_odd_value_in_a_plan_field_is_its_pint_value_or_refused_and_output_is_finite(where, value):
    path, unit = where
    try:
        plan = plan_from_dict(_plan(path, value), "fuzz.toml", DEFAULT_REFERENCE)
    except InputError as exc:
        assert "\n" not in str(exc) and str(exc).startswith("fuzz.toml: ")
        return
    expected = reference_value(value, unit)
    # Reference: pint's conversion (a registry of its own); a boolean is never a number.
    assert expected is not None, (value, "accepted though pint gives no such quantity")
    assert _stored(plan, path) == pytest.approx(expected, rel=1e-12, abs=0.0)
    result = compute_case(plan, DEFAULT_REFERENCE)
    assert infinite_paths({"totals": result.totals, "phases": result.phases}) == []
    assert_no_non_finite(json.dumps(result.to_dict(), allow_nan=False))
    if all(p.nitrous_oxide_l_min == 0 for p in plan.phases):  # no ratio limit to move the flows
        assert result.totals["liquid_agent_ml"] == pytest.approx(_liquid_ml(plan), rel=1e-9, abs=1e-12)


@FUZZ
@given(text=dimensionless_texts(), which=st.sampled_from(["sevoflurane", "n2o_share"]))
def test_a_case_mix_share_with_a_dimensionless_unit_is_its_pint_value_or_refused(text, which):
    header = "case_type,cases_per_year,median_duration,duration_spread,sevoflurane,desflurane,n2o_share,plan\n"
    sevo, n2o = (text, "0") if which == "sevoflurane" else ("1", text)
    row = f'Hernia,100,60,0.3,"{sevo}",0,"{n2o}",plans/adult_2l.toml\n'
    try:
        mix = parse_case_mix_text(header + row, "mix.csv", lambda name, where: load_plan(YEAR / name))
    except InputError as exc:
        assert "\n" not in str(exc) and str(exc).startswith("mix.csv")
        return
    t = mix.types[0]
    expected = reference_value(text, "dimensionless")
    # Reference: pint; a share is a fraction from 0 to 1 (the shares of agents add up to 1).
    assert expected is not None and 0.0 <= expected <= 1.0, text
    got = t.n2o_share if which == "n2o_share" else 1.0  # agent shares are scaled to add up to 1
    assert got == pytest.approx(expected if which == "n2o_share" else 1.0, rel=1e-12, abs=0.0)


@FUZZ
@given(
    where=st.sampled_from(
        [
            ("practice", "adherence", "dimensionless"),
            ("practice", "maintenance_o2_share", "dimensionless"),
            ("practice", "maintenance_flow", "L/min"),
            ("uncertainty", "draws", None),
            ("uncertainty", "seed", None),
            ("equivalence", "car_kg_co2e_per_km", "kg/km"),
        ]
    ),
    value=odd_values,
)
def test_an_odd_value_in_a_scenario_field_is_its_pint_value_or_refused(where, value, demo_mix):
    table, key, unit = where
    text = json.dumps(value) if not isinstance(value, bool) else str(value).lower()
    try:
        s = parse_scenario_text(f'case_mix = "x.csv"\n[{table}]\n{key} = {text}\n', "s.toml", YEAR, demo_mix)
    except InputError as exc:
        assert "\n" not in str(exc) and str(exc).startswith("s.toml: ")
        return
    assert not isinstance(value, bool), "a boolean was taken as a number"
    got = {
        "adherence": s.practice.adherence,
        "maintenance_o2_share": s.practice.maintenance_o2_share,
        "maintenance_flow": s.practice.maintenance_flow_l_min,
        "draws": s.sampling.draws,
        "seed": s.sampling.seed,
        "car_kg_co2e_per_km": s.car_kg_per_km,
    }[key]
    if unit is not None:
        expected = reference_value(value, unit)
        assert expected is not None, value
        assert got == pytest.approx(expected, rel=1e-12, abs=0.0)
    assert math.isfinite(float(got))


@pytest.fixture(scope="module")
def demo_mix():
    from model.io.case_mix import load_case_mix

    return load_case_mix(YEAR / "fernhollow_casemix.csv")


AGENT_FIELDS_FUZZED = ["molar_mass", "liquid_density", "svp_20c", "blood_gas", "mac40", "bottle_volume", "lifetime"]


@SLOW
@given(
    field=st.sampled_from(AGENT_FIELDS_FUZZED),
    value=st.one_of(tiny, st.booleans(), st.floats(1e-3, 2.0), st.sampled_from([0.0, 0.01, 0.05, 1.0])),
    as_json=st.booleans(),
)
def test_an_odd_reference_value_over_the_command_line_is_refused_or_prints_finite_figures(
    tmp_path_factory, capsys, field, value, as_json
):
    # Whatever a settings file holds, the command line prints finite figures or one line (exit 2).
    tmp = tmp_path_factory.mktemp("s")
    settings = tmp / "s.toml"
    settings.write_text(f"[agents.sevoflurane]\n{field} = {str(value).lower()}\n", encoding="utf-8")
    argv = ["--settings", settings, "case", ROOT / "demo_data" / "plans" / "lap_chole_low_flow.toml"]
    status, out, err = run([*argv, "--json"] if as_json else argv, capsys)
    if status == 0:
        assert_no_non_finite(out)
        if as_json:
            json.loads(out)
    else:
        assert_one_line_error(status, err, "gas-ledger: ")
        assert out == ""
