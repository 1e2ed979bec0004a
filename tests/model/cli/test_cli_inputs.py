"""Regression tests from the QA pass of the command line and its input files.

Each test failed before its fix: documented examples that did not run (they were in the README
then; now docs/guide.md, "Command line", and docs/formats.md), bad input that gave a
traceback or a silent wrong number instead of exit status 2 with one line.
"""

import glob
import json
import re
import shlex
from pathlib import Path

import pytest

from model.cli import main

ROOT = Path(__file__).resolve().parents[1]
# The examples moved from the README to the documentation site.
GUIDE = ROOT / "docs" / "guide.md"
FORMATS = ROOT / "docs" / "formats.md"
LOW = ROOT / "demo_data" / "plans" / "lap_chole_low_flow.toml"


def run(argv, capsys):
    """Run the command line in-process; return (status, stdout, stderr)."""
    try:
        status = main([str(a) for a in argv])
    except SystemExit as exc:  # argparse errors
        status = exc.code
    out, err = capsys.readouterr()
    return status, out, err


def assert_one_line_error(status, err, *words):
    assert status == 2, err
    lines = [line for line in err.splitlines() if line.strip()]
    assert len(lines) == 1, err
    assert "Traceback" not in err
    for word in words:
        assert word in lines[0], lines[0]


def readme_cli_commands():
    """The `gas-ledger ...` lines of the user guide's command-line block (continuations joined)."""
    text = GUIDE.read_text(encoding="utf-8")
    block = text.split("## Command line", 1)[1].split("```bash", 1)[1].split("```", 1)[0]
    block = block.replace("\\\n", " ")
    commands = []
    for line in block.splitlines():
        line = line.split("  #", 1)[0].strip()
        if line.startswith("gas-ledger") and "PLAN.toml" not in line:
            commands.append(line)
    return commands


@pytest.mark.parametrize("command", readme_cli_commands())
def test_readme_command_examples_exit_zero(command, capsys, monkeypatch):
    monkeypatch.chdir(ROOT)
    argv = []
    for word in shlex.split(command)[1:]:
        argv.extend(sorted(glob.glob(word)) if "*" in word else [word])
    status, out, err = run(argv, capsys)
    assert status == 0, err
    assert out.strip()


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


def test_settings_agent_override_in_range_is_used(tmp_path, capsys):
    settings = tmp_path / "s.toml"
    settings.write_text("[agents.sevoflurane]\nbottle_volume = 125\n", encoding="utf-8")
    status, out, _ = run(["--settings", settings, "case", LOW, "--json"], capsys)
    assert status == 0
    totals = json.loads(out)["totals"]
    assert totals["bottles"] == pytest.approx(totals["liquid_agent_ml"] / 125)


BASELINE = ROOT / "demo_data" / "year" / "baseline_2l.toml"


def scenario_with(tmp_path, extra):
    """The demo baseline scenario with `extra` TOML appended, its case mix beside it."""
    text = BASELINE.read_text(encoding="utf-8").replace(
        'case_mix = "fernhollow_casemix.csv"', f'case_mix = "{(BASELINE.parent / "fernhollow_casemix.csv").as_posix()}"'
    )
    path = tmp_path / "scenario.toml"
    path.write_text(text + "\n" + extra, encoding="utf-8")
    return path


def test_scenario_unknown_field_message_names_the_scenario_format(tmp_path, capsys):
    path = scenario_with(tmp_path, "[practice]\nfoo = 1\n")
    status, _, err = run(["year", path], capsys)
    assert_one_line_error(status, err, "practice.foo", "scenario format")
    assert "plan format" not in err


def test_scenario_switch_agent_error_names_the_field_once(tmp_path, capsys):
    path = scenario_with(tmp_path, '[practice]\nswitch_agent = { from = "desflurane", to = "xenon" }\n')
    status, _, err = run(["year", path], capsys)
    assert_one_line_error(status, err, "practice.switch_agent.to:", "'xenon'")
    assert "to.switch_agent" not in err


BIRCH = ROOT / "demo_data" / "records" / "fernhollow_birch_cases.csv"


@pytest.mark.parametrize("size", ["abc", "0", "1e99GB"])
def test_audit_bad_memory_limit_exits_2_naming_the_flag(size, capsys):
    status, _, err = run(["audit", BIRCH, f"--memory-limit={size}"], capsys)
    assert_one_line_error(status, err, "--memory-limit", repr(size))


def test_audit_json_of_elapsed_records_without_date_parses(tmp_path, capsys):
    records = tmp_path / "r.csv"
    records.write_text(
        "case_id,elapsed,agent,o2,air,dial\nA,0,sevoflurane,1,1,2\nA,4,sevoflurane,1,1,2\nA,5,sevoflurane,1,1,2\n",
        encoding="utf-8",
    )
    status, out, err = run(["audit", records, "--json"], capsys)
    assert status == 0, err
    data = json.loads(out, parse_constant=lambda c: pytest.fail(f"{c} in JSON"))
    assert data["cases"][0]["start"] is None
    # Dion's formula, liquid mL = FGF x dial % x minutes / mL of vapour per mL of liquid;
    # 2 L/min x 2 % x 5 min = 0.2 L of vapour, about 184 mL of vapour per mL of sevoflurane
    # at 20 °C (common practice, no source) -> about 1.09 mL
    assert data["total"]["liquid_agent_ml"] == pytest.approx(0.2 / 0.184, rel=0.02)


@pytest.mark.parametrize("unit, per_second", [("s", 1), ("ms", 10**3), ("us", 10**6), ("ns", 10**9)])
def test_audit_parquet_elapsed_duration_is_read_in_its_unit(unit, per_second, tmp_path, capsys):
    import pyarrow as pa
    import pyarrow.parquet as pq

    path = tmp_path / "r.parquet"
    pq.write_table(
        pa.table(
            {
                "case_id": ["A", "A"],
                "agent": ["sevoflurane"] * 2,
                "elapsed": pa.array([0, 240 * per_second], type=pa.duration(unit)),
                "o2": [1.0, 1.0],
                "air": [1.0, 1.0],
                "dial": [2.0, 2.0],
            }
        ),
        path,
    )
    status, out, err = run(["audit", path, "--json"], capsys)
    assert status == 0, err
    data = json.loads(out)
    # 240 s between the samples is 4 min counted, no gap (arithmetic)
    assert data["total"]["minutes"] == pytest.approx(4.0)
    assert data["report"]["gaps"] == 0


def test_purchases_line_with_extra_fields_is_set_aside_not_shifted(tmp_path, capsys):
    # Issue 15: the line is set aside alone (it once refused the whole file).
    purchases = tmp_path / "p.csv"
    purchases.write_text(
        "month,item,quantity,unit,size\n2025-09,sevoflurane,9,bottle,,,\n2025-09,desflurane,2,bottle,\n",
        encoding="utf-8",
    )
    status, out, err = run(["audit", BIRCH, "--purchases", purchases, "--json"], capsys)
    assert status == 0, err
    data = json.loads(out)
    assert len(data["purchase_lines_set_aside"]) == 1
    assert "line 2" in data["purchase_lines_set_aside"][0] and "7 fields" in data["purchase_lines_set_aside"][0]
    bought = {r["item"] for r in data["reconciliation"] if r["purchased"]}
    assert bought == {"desflurane"}


def test_audit_table_of_a_single_sample_case_prints_no_nan(tmp_path, capsys):
    records = tmp_path / "r.csv"
    records.write_text("case_id,elapsed,agent,o2,air,dial\nA,0,sevoflurane,1,1,2\n", encoding="utf-8")
    status, out, err = run(["audit", records], capsys)
    assert status == 0, err
    assert "Cases                      1" in out
    assert re.search(r"\bnan\b", out, re.IGNORECASE) is None, out


def test_audit_units_line_giving_a_column_twice_exits_2(tmp_path, capsys):
    records = tmp_path / "r.csv"
    records.write_text(
        "# units: o2=mL/min, o2=L/min\ncase_id,elapsed,agent,o2,air,dial\n"
        "A,0,sevoflurane,1,1,2\nA,4,sevoflurane,1,1,2\n",
        encoding="utf-8",
    )
    status, _, err = run(["audit", records], capsys)
    assert_one_line_error(status, err, "r.csv, line 1", "o2=L/min", "given twice")


def test_case_dial_above_a_lowered_vaporizer_maximum_exits_2(tmp_path, capsys):
    settings = tmp_path / "s.toml"
    settings.write_text("[agents.sevoflurane]\nvaporizer_max = 5\n", encoding="utf-8")
    status, _, err = run(["--settings", settings, "case", LOW], capsys)
    # the demo plan's induction dials 6 % sevoflurane
    assert_one_line_error(status, err, "phases[1].dial", "'6 %'", "up to 5 %")


def test_case_dial_under_a_raised_vaporizer_maximum_runs(tmp_path, capsys):
    plan = tmp_path / "deep.toml"
    plan.write_text(Path(LOW).read_text(encoding="utf-8").replace('dial = "6 %"', 'dial = "9 %"'), encoding="utf-8")
    status, _, err = run(["case", plan], capsys)
    assert_one_line_error(status, err, "deep.toml: phases[1].dial", "'9 %'", "up to 8 %")
    settings = tmp_path / "s.toml"
    settings.write_text("[agents.sevoflurane]\nvaporizer_max = 10\n", encoding="utf-8")
    status, out, err = run(["--settings", settings, "case", plan, "--json"], capsys)
    assert status == 0, err
    assert json.loads(out)["phases"][0]["dial_pct"] == pytest.approx(9.0)


def test_purchases_parquet_with_empty_size_and_date_month_is_read(tmp_path, capsys):
    import pandas as pd

    path = tmp_path / "p.parquet"
    pd.DataFrame(
        {
            "month": pd.to_datetime(["2025-09-01", "2025-09-15"]),
            "item": ["sevoflurane", "nitrous_oxide"],
            "quantity": [9, 1],
            "unit": ["bottle", "cylinder"],
            "size": [None, "9000 L"],
        }
    ).to_parquet(path)
    status, out, err = run(["audit", BIRCH, "--purchases", path, "--json"], capsys)
    assert status == 0, err
    bought = {(r["item"], r["month"]): r["purchased"] for r in json.loads(out)["reconciliation"]}
    # 9 bottles of the 250 mL reference bottle (common practice, no source) = 2250 mL
    assert bought[("sevoflurane", "2025-09")] == pytest.approx(2250.0)
    assert bought[("nitrous_oxide", "2025-09")] == pytest.approx(9000.0)


def readme_blocks(language):
    return re.findall(rf"```{language}\n(.*?)```", FORMATS.read_text(encoding="utf-8"), re.S)


def test_readme_plan_settings_scenario_and_purchases_examples_run(tmp_path, capsys):
    plan, settings, scenario = readme_blocks("toml")[:3]
    (tmp_path / "plan.toml").write_text(plan, encoding="utf-8")
    (tmp_path / "settings.toml").write_text(settings, encoding="utf-8")
    casemix = (BASELINE.parent / "fernhollow_casemix.csv").as_posix()
    (tmp_path / "scenario.toml").write_text(
        scenario.replace('"fernhollow_casemix.csv"', f'"{casemix}"'), encoding="utf-8"
    )
    (tmp_path / "purchases.csv").write_text(readme_blocks("csv")[0], encoding="utf-8")
    for argv in (
        ["case", tmp_path / "plan.toml"],
        ["--settings", tmp_path / "settings.toml", "case", LOW],
        ["year", tmp_path / "scenario.toml", "--draws", "200"],
        ["audit", BIRCH, "--purchases", tmp_path / "purchases.csv"],
    ):
        status, out, err = run(argv, capsys)
        assert status == 0, (argv, err)
        assert out.strip()


def test_purchases_folder_is_named_as_a_folder(tmp_path, capsys):
    status, _, err = run(["audit", BIRCH, "--purchases", tmp_path], capsys)
    assert_one_line_error(status, err, "that is a folder")
    assert "does not exist" not in err


def test_year_gwp_source_without_an_agent_value_names_the_scenario_field(tmp_path, capsys):
    casemix = tmp_path / "mix.csv"
    casemix.write_text(
        "case_type,cases_per_year,median_duration,sevoflurane,halothane,plan\n"
        f"Paediatric,10,45,0.5,0.5,{(BASELINE.parent / 'plans' / 'child_2l.toml').as_posix()}\n",
        encoding="utf-8",
    )
    scenario = tmp_path / "s.toml"
    scenario.write_text(
        f'name = "t"\ncase_mix = "{casemix.as_posix()}"\n'
        '[uncertainty]\ndraws = 50\ngwp_sources = ["ar6_gwp100", "sulbaek_andersen_2012"]\n',
        encoding="utf-8",
    )
    status, _, err = run(["year", scenario], capsys)
    assert_one_line_error(status, err, "s.toml: uncertainty.gwp_sources", "sulbaek_andersen_2012", "halothane")


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


def test_audit_sets_a_bad_purchase_line_aside_and_reconciles_the_rest(tmp_path, capsys):
    purchases = tmp_path / "p.csv"
    purchases.write_text(
        "month,item,quantity,unit,size\n2025-09,sevoflurane,9,bottle,\n"
        "2025-09,sevoflurane,nine,bottle,\n2025-09,isoflurane,1,bottle,\n",
        encoding="utf-8",
    )
    status, out, err = run(["audit", BIRCH, "--purchases", purchases], capsys)
    assert status == 0, err
    assert "1 purchase line(s) set aside" in out and f"{purchases}, line 3: quantity" in out
    status, out, err = run(["audit", BIRCH, "--purchases", purchases, "--json"], capsys)
    data = json.loads(out)
    assert [m.split(": ")[0] for m in data["purchase_lines_set_aside"]] == [f"{purchases}, line 3"]
    bought = {(r["item"], r["month"]): r["purchased"] for r in data["reconciliation"]}
    # 9 bottles of the 250 mL reference bottle (common practice, no source) = 2250 mL; the
    # line that says "nine" adds nothing, the isoflurane line after it is kept.
    assert bought[("sevoflurane", "2025-09")] == pytest.approx(2250.0)
    assert ("isoflurane", "2025-09") in bought
