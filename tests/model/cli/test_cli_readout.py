"""The physiology readout of ``gas-ledger case`` (text output) against the case result."""

from pathlib import Path

from model.case import compute_case
from model.cli import main
from model.io.plans import load_plan

PLANS = Path(__file__).resolve().parents[3] / "demo_data" / "plans"


def test_case_text_shows_inspired_o2_absorbent_uptake_and_safe_o2_share(capsys):
    path = PLANS / "lap_chole_low_flow.toml"
    assert main(["case", str(path)]) == 0
    out = capsys.readouterr().out
    t = compute_case(load_plan(path)).totals
    lines = {line.split("  ")[0]: line for line in out.splitlines() if "  " in line}
    assert (
        f"{t['min_inspired_o2_pct']:.0f} % at {t['min_inspired_o2_time_min']:.0f} min" in lines["Inspired O2, lowest"]
    )
    assert f"(floor {t['inspired_o2_floor_pct']:.0f} %)" in lines["Inspired O2, lowest"]
    assert f"{t['absorbent_g']:.0f} g ({t['co2_absorbed_l']:.1f} L CO2 absorbed)" in lines["Absorbent"]
    assert f"{t['agent_uptake_g']:.1f} g by the patient" in lines["Agent taken up"]
    assert f"{t['lowest_safe_fd_o2_pct']:.0f} %" in lines["Lowest safe fresh gas O2"]


def test_safe_o2_line_is_left_out_when_no_mix_keeps_up(tmp_path, capsys):
    # A closed circuit below the O2 consumption: no fresh gas O2 share keeps inspired O2 up,
    # so the model has no lowest safe share to print (and warns instead).
    plan = (PLANS / "lap_chole_low_flow.toml").read_text()
    plan = plan.replace('o2 = "0.3 L/min"\nair = "0.2 L/min"', 'o2 = "0.1 L/min"\nair = "0.05 L/min"')
    path = tmp_path / "closed.toml"
    path.write_text(plan)
    assert main(["case", str(path)]) == 0
    out = capsys.readouterr().out
    assert "Lowest safe fresh gas O2" not in out
    assert "does not exceed the O2 consumption" in out
