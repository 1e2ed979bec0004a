"""``gas-ledger case`` against the vaporizer's maximum dial from the settings."""

import json
from pathlib import Path

import pytest

from tests.helpers.cli import assert_one_line_error, run

ROOT = Path(__file__).resolve().parents[3]


LOW = ROOT / "demo_data" / "plans" / "lap_chole_low_flow.toml"


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
