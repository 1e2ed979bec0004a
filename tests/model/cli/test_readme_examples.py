"""The README's command-line examples run and exit 0."""

import glob
import re
import shlex
from pathlib import Path

import pytest

from tests.helpers.cli import run

ROOT = Path(__file__).resolve().parents[3]


# The examples moved from the README to the documentation site.
GUIDE = ROOT / "docs" / "guide.md"


FORMATS = ROOT / "docs" / "formats.md"


LOW = ROOT / "demo_data" / "plans" / "lap_chole_low_flow.toml"


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


BASELINE = ROOT / "demo_data" / "year" / "baseline_2l.toml"


BIRCH = ROOT / "demo_data" / "records" / "fernhollow_birch_cases.csv"


def readme_blocks(language):
    return re.findall(rf"```{language}\n(.*?)```", FORMATS.read_text(encoding="utf-8"), re.S)


def test_readme_plan_settings_scenario_and_purchases_examples_run(tmp_path, capsys):
    plan, settings, scenario = readme_blocks("toml")[:3]
    (tmp_path / "plan.toml").write_text(plan, encoding="utf-8")
    (tmp_path / "settings.toml").write_text(settings, encoding="utf-8")
    case_mix = (BASELINE.parent / "fernhollow_casemix.csv").as_posix()
    (tmp_path / "scenario.toml").write_text(
        scenario.replace('"fernhollow_casemix.csv"', f'"{case_mix}"'), encoding="utf-8"
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


def test_the_guide_audit_example_says_what_its_records_cover(capsys, monkeypatch):
    """The guide's audit example reconciles both years of purchases and prints their coverage."""
    monkeypatch.chdir(ROOT)
    (command,) = [c for c in readme_cli_commands() if c.startswith("gas-ledger audit")]
    assert command.count("--purchases") == 2
    argv = []
    for word in shlex.split(command)[1:]:
        argv.extend(sorted(glob.glob(word)) if "*" in word else [word])
    status, out, err = run(argv, capsys)
    assert status == 0, err
    assert "over 24 of the 24 month(s) with purchases" in out and "Coverage by month and theatre" in out
