"""``gas-ledger year`` on scenario files with wrong fields: exit 2 with one line naming the field."""

from pathlib import Path

from tests.helpers.cli import assert_one_line_error, run

ROOT = Path(__file__).resolve().parents[3]


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


def test_year_gwp_source_without_an_agent_value_names_the_scenario_field(tmp_path, capsys):
    case_mix = tmp_path / "mix.csv"
    case_mix.write_text(
        "case_type,cases_per_year,median_duration,sevoflurane,halothane,plan\n"
        f"Paediatric,10,45,0.5,0.5,{(BASELINE.parent / 'plans' / 'child_2l.toml').as_posix()}\n",
        encoding="utf-8",
    )
    scenario = tmp_path / "s.toml"
    scenario.write_text(
        f'name = "t"\ncase_mix = "{case_mix.as_posix()}"\n'
        '[uncertainty]\ndraws = 50\ngwp_sources = ["ar6_gwp100", "sulbaek_andersen_2012"]\n',
        encoding="utf-8",
    )
    status, _, err = run(["year", scenario], capsys)
    assert_one_line_error(status, err, "s.toml: uncertainty.gwp_sources", "sulbaek_andersen_2012", "halothane")
