"""The ``gas-ledger year`` and ``gas-ledger compare`` commands."""

import json
import subprocess
import sys
from pathlib import Path

import pytest

from model.cli import main

ROOT = Path(__file__).resolve().parents[3]
YEAR = ROOT / "demo_data" / "year"
BASE = str(YEAR / "baseline_2l.toml")
HALF = str(YEAR / "proposal_half_litre.toml")


def test_year_table_shows_bands_months_and_caution(capsys):
    assert main(["year", BASE, "--draws", "200"]) == 0
    out = capsys.readouterr().out
    for text in ("Sevoflurane bottles bought", "P5", "P95", "Per month", "Dec", "not a prescription"):
        assert text in out


def test_year_json_is_machine_readable(capsys):
    assert main(["year", BASE, "--draws", "100", "--seed", "5", "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["draws"] == 100 and data["seed"] == 5
    assert data["ranges"]["cost_total"]["p5"] <= data["ranges"]["cost_total"]["p95"]
    assert len(data["monthly"]) == 12
    assert data["car_factor_source"]
    # The notes say what the year models (the circle model, uptake, metabolism, absorbent).
    notes = " ".join(data["notes"])
    for text in (
        "circle-system model",
        "end-tidal target",
        "metabolised share of the patient's uptake",
        "CO2 absorbent",
        "inspired O2",
        "interpolated",
    ):
        assert text in notes
    assert "not modelled" not in notes and "not subtracted" not in notes
    assert data["totals"]["emitted_kg_sevoflurane"] > 0
    assert data["mac_set_label"].startswith("Mapleson 1996")


def test_compare_json_gives_paired_difference(capsys):
    assert main(["compare", BASE, HALF, "--draws", "200", "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    cost = data["difference"]["cost_total"]
    assert cost["difference"] == pytest.approx(cost["proposal"] - cost["baseline"])
    assert cost["p95"] < 0
    assert any("sevoflurane minimum" in w for w in data["warnings"])
    # The MAC set in use is named (docs/methods.md, Depth: age-adjusted MAC).
    assert data["mac_set_label"].startswith("Mapleson 1996")


def test_compare_table(capsys):
    assert main(["compare", BASE, HALF, "--draws", "100"]) == 0
    out = capsys.readouterr().out
    assert "negative = the proposal saves" in out and "Cost, total" in out
    assert "MAC at age 40: Mapleson 1996" in out


@pytest.mark.parametrize(
    "argv, text",
    [
        (["year", "no_such.toml"], "does not exist"),
        (["year", BASE, "--draws", "lots"], "--draws"),
        (["year", BASE, "--seed", "-3"], "--seed"),
        (["compare", BASE, "no_such.toml"], "does not exist"),
    ],
)
def test_bad_input_exits_2_with_one_line(argv, text, capsys):
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert text in err and err.count("\n") == 1 and "Traceback" not in err


def test_bad_case_mix_row_names_file_line_and_field(tmp_path, capsys):
    (tmp_path / "mix.csv").write_text("case_type,cases_per_year,median_duration,sevoflurane,plan\nA,ten,60,1,x.toml\n")
    (tmp_path / "s.toml").write_text('case_mix = "mix.csv"\n')
    assert main(["year", str(tmp_path / "s.toml")]) == 2
    err = capsys.readouterr().err
    assert "mix.csv: line 2, cases_per_year: got 'ten'" in err


def test_installed_command_exits_2_on_bad_input():
    proc = subprocess.run(
        [sys.executable, "-m", "model", "year", "missing.toml"], capture_output=True, text=True, cwd=ROOT
    )
    assert proc.returncode == 2
    assert proc.stderr.startswith("gas-ledger: ") and "Traceback" not in proc.stderr


def test_bands_say_whether_they_hold_model_physiology(capsys):
    # Without the option the bands are of case mix and prices, and say so; with
    # --model-uncertainty they say they hold the model's physiology too (text and JSON).
    assert main(["year", BASE, "--draws", "48"]) == 0
    out = capsys.readouterr().out
    assert "P5-P95 ranges over case mix and prices." in out and "model physiology" not in out
    assert main(["year", BASE, "--draws", "48", "--model-uncertainty"]) == 0
    assert "P5-P95 ranges over case mix, prices and model physiology." in capsys.readouterr().out
    assert main(["compare", BASE, HALF, "--draws", "48", "--model-uncertainty", "--json"]) == 0
    assert (
        json.loads(capsys.readouterr().out)["range_label"] == "P5-P95 ranges over case mix, prices and model physiology"
    )
    assert main(["compare", BASE, HALF, "--draws", "48"]) == 0
    assert "P5-P95 ranges over case mix and prices." in capsys.readouterr().out
