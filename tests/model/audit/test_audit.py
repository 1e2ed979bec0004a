"""Per-case audit of records: the foundation's formulas over samples, sums, engines, formats."""

from __future__ import annotations

from pathlib import Path

import globalwarmingpotentials as gwp_tables
import numpy as np
import pandas as pd
import pytest

from model import compute_case
from model.audit.engine import audit_records
from model.audit.result import ADDITIVE, BAND_COLUMNS, summarise
from model.base.errors import InputError
from model.cli.synth import generate, write
from model.emissions import gas_mass_g
from model.freshgas import FLOW_BAND_NAMES, flow_band
from model.plan import CasePlan, Phase, Settings
from model.reference import DEFAULT_REFERENCE
from model.vapour import liquid_used_series_ml, rule_of_thumb_ml_per_hour
from tests.helpers.records import constant_case as _constant
from tests.helpers.records import write_records as _write

ROOT = Path(__file__).resolve().parents[3]
DEMO = ROOT / "demo_data" / "records"


@pytest.mark.parametrize(
    "agent, o2, air, n2o, dial",
    [
        ("sevoflurane", 0.5, 0.5, 0.0, 2.5),
        ("desflurane", 1.0, 0.0, 2.0, 6.0),
        ("isoflurane", 2.0, 1.0, 0.0, 1.2),
    ],
)
def test_constant_case_equals_the_foundation_case_result(tmp_path, agent, o2, air, n2o, dial):
    plan = CasePlan(
        "constant", agent, (Phase("maintenance", 60.0, o2, air, n2o, dial),), settings=Settings(temperature_c=20.0)
    )
    expected = compute_case(plan).totals
    got = audit_records([_write(tmp_path, _constant("K", 60, o2, air, n2o, dial, agent))]).cases.iloc[0]
    # What was delivered (Dion's formula, gas volumes) and what it costs are the same numbers.
    for key in (
        "liquid_agent_ml",
        "agent_mass_g",
        "oxygen_l",
        "air_l",
        "nitrous_oxide_l",
        "bottles",
        "cost_agent",
        "cost_oxygen",
        "cost_air",
        "cost_nitrous_oxide",
    ):
        assert got[key] == pytest.approx(expected[key], rel=1e-12, abs=1e-12), key
    assert got["minutes"] == expected["duration_min"]
    # Records carry no patient, so the audit counts every delivered gram as emitted: the
    # foundation's emission with its uptake model is lower only by the metabolised share.
    assert got["agent_emitted_g"] == pytest.approx(expected["agent_mass_g"], rel=1e-12)
    metab = DEFAULT_REFERENCE.agents[agent].metabolised_fraction
    assert (1 - metab) * got["agent_emitted_g"] - 1e-9 <= expected["agent_emitted_g"] <= got["agent_emitted_g"] + 1e-9
    assert got["co2e_agent_kg"] == pytest.approx(
        expected["co2e_agent_kg"] * got["agent_emitted_g"] / expected["agent_emitted_g"], rel=1e-12
    )
    n2o_expected = expected["nitrous_oxide_emitted_g"]
    assert n2o_expected <= got["nitrous_oxide_emitted_g"] + 1e-9
    assert got["nitrous_oxide_emitted_g"] == pytest.approx(n2o_expected, rel=1e-3, abs=1e-9)


def test_varying_case_equals_the_foundation_series_integral(tmp_path):
    rng = np.random.default_rng(7)
    t = np.cumsum(rng.uniform(0.2, 2.0, 80))
    o2 = rng.uniform(0.2, 3.0, 80)
    dial = rng.uniform(0.5, 4.0, 80)
    rows = [("V", ti, "Alder", "sevoflurane", oi, 0.0, 0.0, di) for ti, oi, di in zip(t, o2, dial, strict=True)]
    got = audit_records([_write(tmp_path, rows)], gap_limit_min=5).cases.iloc[0]
    expected = liquid_used_series_ml(t, o2, dial, DEFAULT_REFERENCE.agents["sevoflurane"])
    assert got["liquid_agent_ml"] == pytest.approx(expected, rel=1e-12)
    assert got["oxygen_l"] == pytest.approx(np.sum(o2[:-1] * np.diff(t)), rel=1e-12)


def test_one_hour_matches_dions_formula_and_the_bedside_rule(tmp_path):
    rows = _constant("D", 60, 1.0, 0.0, 0.0, 1.0, "sevoflurane")
    got = audit_records([_write(tmp_path, rows)], temperature_c=21.0).cases.iloc[0]
    agent = DEFAULT_REFERENCE.agents["sevoflurane"]
    # Source: Dion P. Can J Anaesth 1992;39:633-4: mL = FGF x dial x t x M / (2412 x density).
    assert got["liquid_agent_ml"] == pytest.approx(
        1.0 * 1.0 * 60 * agent.molar_mass / (2412 * agent.liquid_density), rel=2e-3
    )
    # Common practice, no source: about 3 mL per hour per % per L/min.
    assert got["liquid_agent_ml"] == pytest.approx(float(rule_of_thumb_ml_per_hour(1.0, 1.0)), rel=0.12)


def test_nitrous_oxide_co2e_uses_the_ipcc_gwp(tmp_path):
    rows = _constant("N", 30, 1.0, 0.0, 2.0, 1.0, "sevoflurane")
    got = audit_records([_write(tmp_path, rows)]).cases.iloc[0]
    grams = gas_mass_g(60.0, DEFAULT_REFERENCE.agents["nitrous_oxide"].molar_mass)
    # Source: globalwarmingpotentials (PyPI), IPCC AR6 GWP100 of N2O.
    assert got["co2e_nitrous_oxide_kg"] == pytest.approx(grams / 1000 * gwp_tables.data["AR6GWP100"]["N2O"], rel=1e-9)


def test_flow_band_minutes_follow_the_foundation_bands(tmp_path):
    flows = [0.2, 0.25, 0.4, 0.5, 0.8, 1.0, 1.5, 2.0, 3.0, 4.0, 6.0]
    rows = [("B", float(i), "Alder", "sevoflurane", f, 0.0, 0.0, 1.0) for i, f in enumerate(flows + [1.0])]
    c = audit_records([_write(tmp_path, rows)]).cases.iloc[0]
    # Source: Baker AB, Anaesth Intensive Care 1994;22:341-2, as model.freshgas.flow_band.
    expected = pd.Series(flow_band(flows)).value_counts()
    for name, col in zip(FLOW_BAND_NAMES, BAND_COLUMNS, strict=True):
        assert c[col] == expected.get(name, 0), name
    assert sum(c[col] for col in BAND_COLUMNS) == c["minutes"]


def test_long_high_flow_is_flagged_and_a_gap_breaks_the_run(tmp_path):
    rows = _constant("long", 20, 3.0, 0.0, 0.0, 1.0, "sevoflurane") + _constant(
        "short", 10, 3.0, 0.0, 0.0, 1.0, "sevoflurane"
    )
    broken = [
        ("gap", float(t), "Alder", "sevoflurane", 3.0, 0.0, 0.0, 1.0) for t in list(range(11)) + list(range(20, 31))
    ]
    c = audit_records([_write(tmp_path, rows + broken)], high_flow_limit_min=15).cases.set_index("case_id")
    assert c.loc["long", "longest_high_flow_min"] == 20 and c.loc["long", "high_flow_flag"]
    assert c.loc["short", "longest_high_flow_min"] == 10 and not c.loc["short", "high_flow_flag"]
    assert c.loc["gap", "longest_high_flow_min"] == 10 and not c.loc["gap", "high_flow_flag"]


def test_end_tidal_is_used_where_no_dial_is_recorded(tmp_path):
    body = "case_id,elapsed,agent,o2,end_tidal\n" + "".join(f"E,{t},sevoflurane,1.0,1.5\n" for t in range(11))
    p = tmp_path / "et.csv"
    p.write_text(body, encoding="utf-8")
    c = audit_records([p]).cases.iloc[0]
    assert c["end_tidal_basis_min"] == 10
    expected = liquid_used_series_ml(
        np.arange(11.0), np.ones(11), np.full(11, 1.5), DEFAULT_REFERENCE.agents["sevoflurane"]
    )
    assert c["liquid_agent_ml"] == pytest.approx(expected, rel=1e-12)


def test_aggregates_equal_the_sum_of_their_parts():
    r = audit_records([DEMO / "fernhollow_2025.parquet", DEMO / "fernhollow_birch_cases.csv"])
    total = r.total
    for key in ("theatre", "month", "agent"):
        parts = r.by(key)
        for col in ADDITIVE:
            assert parts[col].sum() == pytest.approx(total[col], rel=1e-9, abs=1e-9), (key, col)
    assert total["cases"] == len(r.cases)
    assert total["samples"] == r.report.rows_valid
    one = summarise(r.cases.iloc[:1], None).iloc[0]
    assert one["liquid_agent_ml"] == pytest.approx(r.cases["liquid_agent_ml"].iloc[0])


def test_csv_and_parquet_of_the_same_records_give_the_same_result(tmp_path):
    df = generate(6000, seed=11)
    a = audit_records([write(df, tmp_path / "s.csv")]).cases
    b = audit_records([write(df, tmp_path / "s.parquet")]).cases
    pd.testing.assert_frame_equal(a, b, check_exact=False, rtol=1e-12)


def test_memory_and_sql_engines_agree_on_messy_records(tmp_path):
    df = generate(3000, seed=5).astype(
        {"o2 [L/min]": object, "dial [%]": object, "agent": str, "case_id": str, "theatre": str}
    )
    df.loc[10, "o2 [L/min]"] = "x"
    df.loc[20, "agent"] = "argon"
    df.loc[30, "dial [%]"] = 40
    df = pd.concat([df, df.iloc[[50, 60]], df.iloc[[40]]], ignore_index=True)  # duplicates, backwards
    df = df.drop(index=range(200, 215))  # a gap
    p = tmp_path / "messy.csv"
    df.to_csv(p, index=False)
    a = audit_records([p], engine="memory")
    b = audit_records([p], engine="sql")
    pd.testing.assert_frame_equal(a.cases, b.cases, check_exact=False, rtol=1e-12, check_dtype=False)
    assert a.report.summary() == b.report.summary()
    pd.testing.assert_frame_equal(a.report.issues, b.report.issues)
    pd.testing.assert_frame_equal(a.report.gap_list, b.report.gap_list)
    assert a.report.rows_set_aside == 6 and a.report.gaps >= 1


def test_cli_audit_reports_rows_set_aside_without_failing(capsys):
    import json

    from model.cli import main

    code = main(
        [
            "audit",
            str(DEMO / "fernhollow_birch_cases.csv"),
            "--purchases",
            str(DEMO / "fernhollow_purchases_2025.csv"),
            "--json",
        ]
    )
    assert code == 0
    data = json.loads(capsys.readouterr().out)
    assert data["report"]["rows_set_aside"] == len(data["messages"]) > 0
    assert data["report"]["gaps"] == len(data["gaps"]) >= 1
    assert any(r["item"] == "nitrous_oxide" and r["month"] == "all" for r in data["reconciliation"])
    assert "de-identified" in data["de_identification"]
    assert main(["audit", str(DEMO / "fernhollow_birch_cases.csv")]) == 0
    out = capsys.readouterr().out
    assert "set aside" in out and "line 14" in out and "By theatre" in out


def test_cli_audit_bad_file_exits_2_with_one_line(tmp_path, capsys):
    from model.cli import main

    p = tmp_path / "no_agent.csv"
    p.write_text("case_id,elapsed,o2\nA,0,1\n", encoding="utf-8")
    assert main(["audit", str(p)]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "agent" in err and str(p) in err
    assert main(["audit", str(DEMO / "fernhollow_birch_cases.csv"), "--gap-limit", "-1"]) == 2
    assert "gap limit" in capsys.readouterr().err


@pytest.mark.parametrize(
    "option, name",
    [
        ("capture_efficiency", "capture efficiency"),
        ("temperature_c", "room temperature"),
        ("high_flow_l_min", "high flow threshold"),
        ("gap_limit_min", "gap limit"),
    ],
)
def test_a_boolean_option_is_refused_not_read_as_one(tmp_path, option, name):
    # Python takes True as 1: a capture efficiency of True would be read as 100 % capture.
    path = _write(tmp_path, [("V", 0.0, "Alder", "sevoflurane", 1.0, 0.0, 0.0, 2.0)])
    with pytest.raises(InputError, match=rf"^{name}: got True"):
        audit_records([path], **{option: True})
