"""``gas-ledger --settings``: overrides in range are used, out of range exit 2 naming the field."""

import json
from pathlib import Path

import pytest

from tests.helpers.cli import assert_one_line_error, run

ROOT = Path(__file__).resolve().parents[3]


LOW = ROOT / "demo_data" / "plans" / "lap_chole_low_flow.toml"


@pytest.mark.parametrize(
    "field, value",
    [
        ("molar_mass", 0),
        ("liquid_density", 0),
        ("bottle_volume", 0),
        ("mac40", 0),
        ("blood_gas", 0),
        ("vaporizer_max", 0),
        ("svp_20c", 0),
        ("metabolised_fraction", 2),
        ("liquid_density", 1e9),
    ],
)
def test_settings_agent_override_out_of_range_exits_2_naming_field(field, value, tmp_path, capsys):
    settings = tmp_path / "s.toml"
    settings.write_text(f"[agents.sevoflurane]\n{field} = {value}\n", encoding="utf-8")
    status, _, err = run(["--settings", settings, "case", LOW], capsys)
    assert_one_line_error(status, err, f"agents.sevoflurane.{field}", "allowed range")


def test_mac_set_in_the_settings_is_used_and_named_in_every_output(tmp_path, capsys):
    settings = tmp_path / "s.toml"
    settings.write_text('[mac]\nset = "prescribing_information"\n', encoding="utf-8")
    status, out, _ = run(["--settings", settings, "case", LOW, "--json"], capsys)
    assert status == 0 and "prescribing information" in json.loads(out)["mac_set_label"]
    status, out, _ = run(["case", LOW], capsys)
    assert status == 0 and "MAC at age 40" in out and "Mapleson 1996" in out
    status, out, _ = run(["sweep", LOW], capsys)
    assert status == 0 and "MAC at age 40: Mapleson 1996" in out
    settings.write_text('[mac]\nset = "labels"\n', encoding="utf-8")
    status, _, err = run(["--settings", settings, "case", LOW], capsys)
    assert_one_line_error(status, err, "mac.set", "allowed MAC sets")


def test_settings_agent_override_in_range_is_used(tmp_path, capsys):
    settings = tmp_path / "s.toml"
    settings.write_text("[agents.sevoflurane]\nbottle_volume = 125\n", encoding="utf-8")
    status, out, _ = run(["--settings", settings, "case", LOW, "--json"], capsys)
    assert status == 0
    totals = json.loads(out)["totals"]
    assert totals["bottles"] == pytest.approx(totals["liquid_agent_ml"] / 125)


def test_user_gwp_without_n2o_serves_plans_that_use_no_n2o(tmp_path, capsys):
    # A user GWP table without nitrous oxide is enough for a plan that gives no N2O; a plan
    # that does give N2O is refused with one line naming what is missing.
    settings = tmp_path / "settings.toml"
    settings.write_text("[gwp.user]\nsevoflurane = 130.0\n", encoding="utf-8")
    plan = tmp_path / "plan.toml"
    plan.write_text(
        LOW.read_text(encoding="utf-8").replace('gwp_source = "ar6_gwp100"', 'gwp_source = "user"'), encoding="utf-8"
    )
    status, out, err = run(["--settings", settings, "case", plan, "--json"], capsys)
    assert status == 0, err
    t = json.loads(out)["totals"]
    # CO2e = emitted mass x GWP (IPCC AR6 WG1 Ch. 7 definition of CO2-equivalent)
    assert t["co2e_agent_kg"] == pytest.approx(t["agent_emitted_g"] / 1000.0 * 130.0, rel=1e-9)
    assert t["co2e_nitrous_oxide_kg"] == 0.0
    status, out, err = run(["--settings", settings, "sweep", plan, "--json"], capsys)
    assert status == 0, err
    with_n2o = tmp_path / "n2o.toml"
    with_n2o.write_text(
        plan.read_text(encoding="utf-8").replace('air = "0.2 L/min"', 'n2o = "0.2 L/min"'), encoding="utf-8"
    )
    status, out, err = run(["--settings", settings, "case", with_n2o], capsys)
    assert_one_line_error(status, err, "nitrous_oxide", "gwp.user")
