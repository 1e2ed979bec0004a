"""Values just inside an open limit: refused by a smallest sensible value; never nan or inf in output."""

from __future__ import annotations

import json
import re
import shutil
import tomllib
import warnings
from pathlib import Path

import pytest
import tomli_w

from model.reference import _AGENT_FIELD_RANGES
from tests.helpers.cli import assert_one_line_error, run

ROOT = Path(__file__).resolve().parents[3]
LOW = ROOT / "demo_data" / "plans" / "lap_chole_low_flow.toml"
YEAR = ROOT / "demo_data" / "year"
#: The words "nan" and "inf" as Python prints non-finite floats.
NON_FINITE = re.compile(r"(?<![A-Za-z])-?(nan|inf|infinity)(?![A-Za-z])", re.IGNORECASE)
SUBNORMAL = "5e-324"  # the smallest positive double (IEEE 754 binary64)

# Fields the model divides by, or multiplies by large numbers: the list and their kin.
DIVIDING_FIELDS = ["molar_mass", "liquid_density", "svp_20c", "blood_gas", "mac40", "vaporizer_max", "bottle_volume"]


def _no_non_finite(text: str) -> None:
    assert not NON_FINITE.search(text), NON_FINITE.search(text)


@pytest.mark.parametrize("field", [*DIVIDING_FIELDS, "lifetime"])
def test_a_subnormal_reference_value_is_refused_naming_the_field(tmp_path, capsys, field):
    settings = tmp_path / "s.toml"
    settings.write_text(f"[agents.sevoflurane]\n{field} = {SUBNORMAL}\n", encoding="utf-8")
    status, out, err = run(["--settings", settings, "case", LOW, "--json"], capsys)
    assert_one_line_error(status, err, f"agents.sevoflurane.{field}", SUBNORMAL, "allowed range is [")
    assert out == ""


@pytest.mark.parametrize("field", DIVIDING_FIELDS)
def test_the_smallest_allowed_reference_value_gives_finite_output(tmp_path, capsys, field):
    low = _AGENT_FIELD_RANGES[field][0]
    settings = tmp_path / "s.toml"
    settings.write_text(f"[agents.sevoflurane]\n{field} = {low!r}\n", encoding="utf-8")
    plan = tmp_path / "p.toml"
    # A dial under the smallest vaporizer maximum, so that the plan is valid with it.
    plan.write_text(re.sub(r'dial = "[\d.]+ %"', 'dial = "0.1 %"', LOW.read_text(encoding="utf-8")), encoding="utf-8")
    for argv in (["case", plan], ["case", plan, "--json"]):
        status, out, err = run(["--settings", settings, *argv], capsys)
        if status == 0:
            _no_non_finite(out)
            if "--json" in argv:
                json.loads(out)
        else:  # refused by the guard: one line, nothing printed
            assert_one_line_error(status, err, "could not be worked out")
            assert out == ""


@pytest.mark.parametrize(
    "old, new, words",
    [
        ('o2 = "0.3 L/min"\nair = "0.2 L/min"', f"o2 = {SUBNORMAL}\nair = 0", ["phases[2].o2/air/n2o", "0.01 L/min"]),
        ("[settings]\n", f"[settings]\nmin_o2_share = {SUBNORMAL}\n", ["settings.min_o2_share", "at least 0.01"]),
    ],
)
def test_a_subnormal_plan_value_is_refused(tmp_path, capsys, old, new, words):
    text = LOW.read_text(encoding="utf-8")
    assert old in text
    plan = tmp_path / "p.toml"
    plan.write_text(text.replace(old, new, 1), encoding="utf-8")
    status, out, err = run(["case", plan], capsys)
    assert_one_line_error(status, err, *words)
    assert out == ""


@pytest.mark.parametrize(
    "table, key, words",
    [
        ("equivalence", "car_kg_co2e_per_km", ["equivalence.car_kg_co2e_per_km", "[0.001, 10]"]),
        ("practice", "maintenance_flow", ["practice.maintenance_flow", "[0.01, 20]"]),
    ],
)
def test_a_subnormal_scenario_value_is_refused(tmp_path, capsys, table, key, words):
    year = tmp_path / "year"
    shutil.copytree(YEAR, year)  # the scenario beside its case mix and plans
    path = year / "baseline_2l.toml"
    data = tomllib.loads(path.read_text(encoding="utf-8"))
    data.setdefault(table, {})[key] = 5e-324
    path.write_text(tomli_w.dumps(data), encoding="utf-8")
    status, out, err = run(["year", path, "--draws", "1"], capsys)
    assert_one_line_error(status, err, *words)
    assert out == ""


def test_an_infinite_figure_is_never_printed_or_written_as_null(tmp_path, capsys, monkeypatch):
    # The guard behind the limits: were a figure still infinite, the command refuses it.
    import model.case

    real = model.case.compute_case

    def broken(plan, reference):
        result = real(plan, reference)
        result.totals["liquid_agent_ml"] = float("inf")
        return result

    monkeypatch.setattr(model.case, "compute_case", broken)
    for argv in (["case", LOW], ["case", LOW, "--json"]):
        status, out, err = run(argv, capsys)
        assert_one_line_error(status, err, "totals.liquid_agent_ml", "could not be worked out")
        assert out == ""


def test_a_subnormal_o2_share_of_the_practice_flow_runs_without_a_warning(tmp_path, capsys):
    # 5e-324 of the maintenance flow as O2 is a share like any other (0 is allowed): the
    # year runs, and the inspired-O2 check's division by a flow just above 0 is masked quietly.
    year = tmp_path / "year"
    shutil.copytree(YEAR, year)
    path = year / "baseline_2l.toml"
    data = tomllib.loads(path.read_text(encoding="utf-8"))
    data.setdefault("practice", {})["maintenance_o2_share"] = 5e-324
    path.write_text(tomli_w.dumps(data), encoding="utf-8")
    with warnings.catch_warnings():
        warnings.simplefilter("error", RuntimeWarning)
        status, out, err = run(["year", path, "--draws", "2"], capsys)
    assert status == 0, err
    _no_non_finite(out)


def test_an_infinite_year_figure_is_refused_before_any_table_is_printed(capsys, monkeypatch):
    # The year's text tables hold figures already formatted as text, so the guard runs first.
    import model.year.result

    real = model.year.result.compute_year

    def broken(*args, **kwargs):
        result = real(*args, **kwargs)
        result.summary.loc[0, "p95"] = float("inf")
        return result

    monkeypatch.setattr(model.year.result, "compute_year", broken)
    for argv in (["year", YEAR / "baseline_2l.toml", "--draws", "2"], ["year", YEAR / "baseline_2l.toml", "--json"]):
        status, out, err = run(argv, capsys)
        assert_one_line_error(status, err, "year", "summary[1].p95", "could not be worked out")
        assert out == ""
