"""The command line: tables, JSON, the reference table, settings overrides, and bad input."""

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

from model.cli import main

ROOT = Path(__file__).resolve().parents[3]
DEMO = ROOT / "demo_data" / "plans"
LOW = DEMO / "lap_chole_low_flow.toml"
SETTINGS = ROOT / "demo_data" / "settings.toml"
CONSOLE = Path(sys.executable).parent / "gas-ledger"

PLAN = """\
format = "fresh-gas-ledger plan 1"
name = "cli test"
agent = "{agent}"

[patient]
weight = "70 kg"
age = "40 year"

[settings]
{settings}

[[phases]]
name = "only"
duration = "{duration}"
o2 = "{o2}"
air = "1 L/min"
dial = "{dial}"
"""


def write_plan(
    tmp_path, name="plan.toml", agent="sevoflurane", settings="", duration="60 min", o2="1 L/min", dial="2 %"
):
    path = tmp_path / name
    path.write_text(PLAN.format(agent=agent, settings=settings, duration=duration, o2=o2, dial=dial), encoding="utf-8")
    return path


def run(argv, capsys, env=None, monkeypatch=None):
    """Run the command line in-process; return (status, stdout, stderr)."""
    if env:
        for key, value in env.items():
            monkeypatch.setenv(key, value)
    try:
        status = main([str(a) for a in argv])
    except SystemExit as exc:  # argparse exits on bad flags
        status = exc.code
    out, err = capsys.readouterr()
    return status, out, err


def as_json(argv, capsys):
    status, out, err = run(argv, capsys)
    assert status == 0, err
    return json.loads(out)


# --- case ---------------------------------------------------------------------------------


def test_case_prints_a_readable_table(capsys):
    status, out, err = run(["case", LOW], capsys)
    assert status == 0 and err == ""
    for text in (
        "Laparoscopic cholecystectomy, low flow",
        "induction",
        "maintenance",
        "emergence",
        "Liquid agent",
        "bottles",
        "CO2e (IPCC AR6 GWP100)",
        "Cost",
        "GBP",
        "MAC-hours",
        "not a prescription",
    ):
        assert text in out, text


TOTAL_KEYS = {
    "duration_min",
    "liquid_agent_ml",
    "bottles",
    "agent_mass_g",
    "oxygen_l",
    "air_l",
    "nitrous_oxide_l",
    "absorbent_g",
    "agent_emitted_g",
    "nitrous_oxide_emitted_g",
    "co2e_agent_kg",
    "co2e_nitrous_oxide_kg",
    "co2e_total_kg",
    "cost_agent",
    "cost_oxygen",
    "cost_air",
    "cost_nitrous_oxide",
    "cost_absorbent",
    "cost_total",
    "mac_hours",
    "min_fd_o2_pct",
}
PHASE_KEYS = {
    "phase",
    "duration_min",
    "oxygen_l_min",
    "air_l_min",
    "nitrous_oxide_l_min",
    "fgf_l_min",
    "flow_band",
    "fd_o2_pct",
    "dial_pct",
    "liquid_agent_ml",
    "co2e_kg",
    "mac_hours",
}
UNIT_SUFFIXES = ("_min", "_ml", "_g", "_l", "_kg", "_pct", "_l_min")


def test_case_json_has_stable_keys_with_units(capsys):
    data = as_json(["case", LOW, "--json"], capsys)
    assert {
        "plan",
        "agent",
        "currency",
        "gwp_source",
        "gwp_source_label",
        "totals",
        "phases",
        "warnings",
        "caution",
    } <= set(data)
    assert TOTAL_KEYS <= set(data["totals"])
    for row in data["phases"]:
        assert PHASE_KEYS <= set(row)
    # quantities carry their unit in the key; money is in `currency`, counts are unitless
    for key in TOTAL_KEYS:
        assert key.endswith(UNIT_SUFFIXES) or key.startswith("cost_") or key in ("bottles", "mac_hours"), key
    assert data["currency"] == "GBP"
    assert data["totals"]["liquid_agent_ml"] == pytest.approx(25.852, rel=1e-3)


def test_case_json_is_the_same_twice(capsys):
    assert as_json(["case", LOW, "--json"], capsys) == as_json(["case", LOW, "--json"], capsys)


# --- reference ------------------------------------------------------------------------------


def test_reference_prints_every_value_with_its_source(capsys):
    status, out, err = run(["reference"], capsys)
    assert status == 0 and err == ""
    for text in (
        "Sevoflurane",
        "Desflurane",
        "Isoflurane",
        "Halothane",
        "Nitrous oxide",
        "molar mass",
        "liquid density",
        "MAC at age 40",
        "GWP, IPCC AR6 GWP100",
        "GWP, IPCC AR5 GWP100",
        "GWP, IPCC AR6 GWP20",
        "Sulbaek Andersen",
        "from memory",
        "common practice, no source",
        "invented example price",
        "IPCC AR6 WG1 (2021)",
        "Mapleson",
    ):
        assert text in out, text
    assert "0.0002" in out  # small shares are not rounded to 0.00


def test_reference_json_rows_all_carry_a_source(capsys):
    rows = as_json(["reference", "--json"], capsys)
    assert len(rows) > 60
    for row in rows:
        assert {"item", "field", "value", "unit", "source", "basis", "default"} <= set(row)
        assert row["source"]


# --- settings overrides --------------------------------------------------------------------


def test_settings_price_override_changes_the_cost(capsys, tmp_path):
    base = as_json(["case", LOW, "--json"], capsys)["totals"]
    local = tmp_path / "local.toml"
    local.write_text('[prices]\ncurrency = "EUR"\nbottle = { sevoflurane = 240.0 }\n', encoding="utf-8")
    data = as_json(["--settings", local, "case", LOW, "--json"], capsys)
    assert data["currency"] == "EUR"
    assert data["totals"]["cost_agent"] == pytest.approx(base["cost_agent"] * 2)
    assert data["totals"]["co2e_total_kg"] == base["co2e_total_kg"]


def test_settings_gwp_override_changes_co2e(capsys, tmp_path):
    base = as_json(["case", LOW, "--json"], capsys)["totals"]
    local = tmp_path / "local.toml"
    local.write_text("[gwp.ar6_gwp100]\nsevoflurane = 390\n", encoding="utf-8")
    data = as_json(["--settings", local, "case", LOW, "--json"], capsys)["totals"]
    assert data["co2e_agent_kg"] == pytest.approx(base["co2e_agent_kg"] * 2)
    assert data["cost_total"] == base["cost_total"]


def test_user_gwp_source_reads_the_settings_file(capsys, tmp_path):
    plan = write_plan(tmp_path, settings='gwp_source = "user"')
    data = as_json(["--settings", SETTINGS, "case", plan, "--json"], capsys)
    assert data["gwp_source"] == "user"
    t = data["totals"]
    # demo_data/settings.toml: sevoflurane 130 (Sulbaek Andersen 2012, from memory)
    assert t["co2e_agent_kg"] == pytest.approx(t["agent_emitted_g"] / 1000 * 130)
    # without the settings file the user source has no values: one clear line, status 2
    status, out, err = run(["case", plan], capsys)
    assert status == 2 and "[gwp.user]" in err and len(err.splitlines()) == 1


def test_demo_settings_change_prices(capsys):
    base = as_json(["case", LOW, "--json"], capsys)
    data = as_json(["--settings", SETTINGS, "case", LOW, "--json"], capsys)
    assert data["currency"] == "EUR" and data["totals"]["cost_total"] != base["totals"]["cost_total"]


def test_settings_from_environment(capsys, tmp_path, monkeypatch):
    local = tmp_path / "env.toml"
    local.write_text('[prices]\ncurrency = "NOK"\n', encoding="utf-8")
    monkeypatch.setenv("GAS_LEDGER_SETTINGS", str(local))
    assert as_json(["case", LOW, "--json"], capsys)["currency"] == "NOK"


def test_reference_shows_override_and_keeps_default(capsys, tmp_path):
    local = tmp_path / "local.toml"
    local.write_text(
        "[agents.sevoflurane]\nmac40 = 1.95\n[gwp.ar6_gwp100]\ndesflurane = 2000\n[prices]\noxygen_per_1000_l = 9.5\n",
        encoding="utf-8",
    )
    rows = as_json(["--settings", local, "reference", "--json"], capsys)
    by_key = {(r["item"], r["field"]): r for r in rows}
    mac = by_key[("Sevoflurane", "MAC at age 40 in O2")]
    # Source: Mapleson WW, Br J Anaesth 1996;76:179-85 (abstract): the default MAC at 40, 1.80 %.
    assert mac["value"] == 1.95 and mac["default"] == 1.8 and "local.toml" in mac["source"]
    # The built-in value keeps its source.
    assert "Mapleson WW, Br J Anaesth 1996" in mac["default_source"]
    des = by_key[("Desflurane", "GWP, IPCC AR6 GWP100")]
    assert des["value"] == 2000 and des["default"] == 2590
    o2 = by_key[("Oxygen", "price per 1000 L")]
    assert o2["value"] == 9.5 and o2["default"] == 3.0
    status, out, err = run(["--settings", local, "reference"], capsys)
    assert status == 0
    line = next(x for x in out.splitlines() if "MAC at age 40" in x and x.startswith("Sevoflurane"))
    assert "1.95" in line and "1.80" in line and "user override" in line
    assert "default" in out.splitlines()[0] and "Overrides from:" in out


# --- bad input: status 2, one line on stderr naming field, value and what is allowed ---------

BAD_PLANS = {
    "unknown agent": (dict(agent="xenonium"), ["agent", "xenonium", "allowed agents are sevoflurane"]),
    "negative flow": (dict(o2="-1 L/min"), ["phases[1].o2", "-1 L/min", "allowed range is [0, 20] L/min"]),
    "absurd flow": (dict(o2="900 L/min"), ["phases[1].o2", "900 L/min", "allowed range is [0, 20] L/min"]),
    "dial above vaporizer": (dict(dial="9 %"), ["phases[1].dial", "9 %", "vaporizer goes up to 8 %"]),
    "O2 share above 1": (dict(settings="min_o2_share = 1.5"), ["settings.min_o2_share", "1.5", "a share from 0 to 1"]),
    "O2 floor above 100 %": (
        dict(settings='inspired_o2_floor = "150 %"'),
        ["settings.inspired_o2_floor", "150 %", "a share from 0 to 1"],
    ),
    "wrong unit": (dict(o2="1 kg"), ["phases[1].o2", "1 kg", "convertible to L/min"]),
    "wrong unit of time": (dict(duration="60 kg"), ["phases[1].duration", "60 kg", "convertible to min"]),
    "unknown GWP source": (dict(settings='gwp_source = "ar7"'), ["settings.gwp_source", "ar7", "ar6_gwp100"]),
}


def assert_one_clear_line(status, out, err, parts):
    assert status == 2
    assert out == ""
    lines = err.splitlines()
    assert len(lines) == 1, err
    assert lines[0].startswith("gas-ledger: ")
    assert "Traceback" not in err
    for part in parts:
        assert part in lines[0], (part, lines[0])


@pytest.mark.parametrize("changes, parts", BAD_PLANS.values(), ids=BAD_PLANS.keys())
def test_bad_plan_exits_2_with_one_line(changes, parts, capsys, tmp_path):
    plan = write_plan(tmp_path, **changes)
    status, out, err = run(["case", plan], capsys)
    assert_one_clear_line(status, out, err, [str(plan)] + parts)


def test_a_target_in_percent_exits_2_naming_the_field(capsys, tmp_path):
    """Issue 12 defect 3: ``target = "2 %"`` is refused as on the Case plan page, not read as 2 x MAC."""
    plan = write_plan(tmp_path)
    plan.write_text(plan.read_text().replace('dial = "2 %"', 'target = "2 %"'), encoding="utf-8")
    status, out, err = run(["case", plan], capsys)
    assert_one_clear_line(status, out, err, [str(plan), "phases[1].target", "2 %", "MAC multiple"])


def test_missing_field_exits_2(capsys, tmp_path):
    plan = write_plan(tmp_path)
    plan.write_text(plan.read_text().replace('duration = "60 min"\n', ""), encoding="utf-8")
    status, out, err = run(["case", plan], capsys)
    assert_one_clear_line(status, out, err, ["phases[1].duration", "nothing", "this field is required"])


def test_malformed_toml_exits_2(capsys, tmp_path):
    plan = tmp_path / "broken.toml"
    plan.write_text('name = "unclosed\nagent = "sevoflurane"\n', encoding="utf-8")
    status, out, err = run(["case", plan], capsys)
    assert_one_clear_line(status, out, err, ["broken.toml (line 1, column 17)", "not valid TOML"])


def test_missing_plan_file_exits_2(capsys, tmp_path):
    status, out, err = run(["case", tmp_path / "nope.toml"], capsys)
    assert_one_clear_line(status, out, err, ["plan file", "nope.toml", "no such file"])


def test_folder_as_plan_exits_2(capsys, tmp_path):
    status, out, err = run(["case", tmp_path], capsys)
    assert_one_clear_line(status, out, err, ["plan file", tmp_path.name, "folder"])


def test_unreadable_plan_exits_2(capsys, tmp_path, monkeypatch):
    plan = write_plan(tmp_path)

    def refuse(self):
        raise PermissionError(13, "Permission denied")

    monkeypatch.setattr(Path, "read_bytes", refuse)  # chmod 000 does not stop root
    status, out, err = run(["case", plan], capsys)
    assert_one_clear_line(status, out, err, ["plan file", "cannot be read (Permission denied)"])


@pytest.mark.parametrize(
    "content, parts",
    [
        ("[prices\n", ["settings file", "(line 1, column 8)", "not valid TOML"]),
        ("[colours]\nsky = 1\n", ["[colours]", "allowed tables are agents, gwp, prices"]),
        ("[prices]\noxygen_per_1000_l = -3\n", ["prices.oxygen_per_1000_l", "-3", "must not be negative"]),
        ('[agents.sevoflurane]\nmac40 = "two"\n', ["agents.sevoflurane.mac40", "two", "finite number"]),
        ("[agents.xenon]\nmac40 = 70\n", ["agents.xenon", "xenon", "allowed agents"]),
        ("[gwp.user]\nsevoflurane = -1\n", ["gwp.user.sevoflurane", "-1", "must not be negative"]),
    ],
)
def test_bad_settings_file_exits_2(content, parts, capsys, tmp_path):
    local = tmp_path / "local.toml"
    local.write_text(content, encoding="utf-8")
    status, out, err = run(["--settings", local, "case", LOW], capsys)
    assert_one_clear_line(status, out, err, parts)


def test_missing_settings_file_exits_2(capsys, tmp_path):
    status, out, err = run(["--settings", tmp_path / "gone.toml", "reference"], capsys)
    assert_one_clear_line(status, out, err, ["settings file", "gone.toml", "no such file"])


@pytest.mark.parametrize(
    "argv, parts",
    [
        (["case", LOW, "--bogus"], ["unrecognized arguments: --bogus", "--help"]),
        (["frobnicate"], ["invalid choice: 'frobnicate'", "case", "reference"]),
        (["case"], ["required: plan"]),
        (["--settings"], ["--settings", "expected one argument"]),
    ],
)
def test_bad_flag_exits_2_with_one_line(argv, parts, capsys):
    status, out, err = run(argv, capsys)
    assert_one_clear_line(status, out, err, parts)


def test_no_command_prints_help_and_one_line(capsys):
    status, out, err = run([], capsys)
    assert status == 2
    assert "usage: gas-ledger" in out
    # (other parts of the project may register more commands after these two)
    assert len(err.splitlines()) == 1
    assert err.startswith("gas-ledger: no command given; choose one of case, reference")


# --- the installed console script and `python -m model` -----------------------------------


def _env():
    env = dict(os.environ)
    env.pop("GAS_LEDGER_SETTINGS", None)
    return env


@pytest.mark.parametrize(
    "command", [[str(CONSOLE)], [sys.executable, "-m", "model"]], ids=["gas-ledger", "python -m model"]
)
def test_console_commands_run_case_and_report_bad_input(command, tmp_path):
    ok = subprocess.run(
        command + ["case", str(LOW), "--json"], capture_output=True, text=True, cwd=ROOT, env=_env(), timeout=120
    )
    assert ok.returncode == 0, ok.stderr
    assert json.loads(ok.stdout)["totals"]["liquid_agent_ml"] > 0
    bad = subprocess.run(
        command + ["case", str(write_plan(tmp_path, o2="-2 L/min"))],
        capture_output=True,
        text=True,
        cwd=ROOT,
        env=_env(),
        timeout=120,
    )
    assert bad.returncode == 2
    assert bad.stdout == ""
    assert len(bad.stderr.splitlines()) == 1 and "Traceback" not in bad.stderr
    assert "phases[1].o2: got '-2 L/min'; allowed range is [0, 20] L/min" in bad.stderr


def test_console_reference_prints_sources():
    out = subprocess.run([str(CONSOLE), "reference"], capture_output=True, text=True, cwd=ROOT, env=_env(), timeout=120)
    assert out.returncode == 0
    assert "source" in out.stdout.splitlines()[0] and "IPCC AR6" in out.stdout
