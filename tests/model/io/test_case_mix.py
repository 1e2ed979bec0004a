"""The case-mix file: reading, validation messages, round trip, and the stretched phase."""

from pathlib import Path

import pandas as pd
import pytest

from model.base.errors import InputError
from model.io.case_mix import (
    case_mix_from_frame,
    case_mix_to_csv,
    case_mix_to_frame,
    load_case_mix,
    parse_case_mix_text,
)
from model.io.plans import load_plan
from model.year.inputs import stretch_phase

YEAR = Path(__file__).resolve().parents[3] / "demo_data" / "year"
HEADER = "case_type,cases_per_year,median_duration,duration_spread,sevoflurane,desflurane,n2o_share,plan\n"


def _plans(name, where):
    return load_plan(YEAR / name)


def test_demo_case_mix_reads_every_type():
    mix = load_case_mix(YEAR / "fernhollow_casemix.csv")
    assert len(mix.types) == 11
    assert mix.cases_per_year == sum(t.cases_per_year for t in mix.types)
    for t in mix.types:
        assert sum(t.agent_shares.values()) == pytest.approx(1.0)
        assert t.plan.patient.weight_kg == t.weight_kg


def test_units_and_percent_shares_are_read():
    text = HEADER + 'Hernia,100,"1.5 h",0.3,80 %,20 %,"10 %",plans/adult_2l.toml\n'
    t = parse_case_mix_text(text, "mix.csv", _plans).types[0]
    assert t.median_min == pytest.approx(90.0)
    assert t.agent_shares["sevoflurane"] == pytest.approx(0.8)
    assert t.n2o_share == pytest.approx(0.1)


@pytest.mark.parametrize(
    "row, field",
    [
        ("Hernia,-1,60,0.3,1,0,0,plans/adult_2l.toml", "cases_per_year"),
        ("Hernia,10.5,60,0.3,1,0,0,plans/adult_2l.toml", "cases_per_year"),
        ("Hernia,10,60 kg,0.3,1,0,0,plans/adult_2l.toml", "median_duration"),
        ("Hernia,10,60,0.3,0.7,0.1,0,plans/adult_2l.toml", "agent shares"),
        ("Hernia,10,60,0.3,1,0,1.5,plans/adult_2l.toml", "n2o_share"),
        ("Hernia,10,60,-1,1,0,0,plans/adult_2l.toml", "duration_spread"),
        ("Hernia,10,10,0.3,1,0,0,plans/adult_2l.toml", "median_duration"),
        (",10,60,0.3,1,0,0,plans/adult_2l.toml", "case_type"),
    ],
)
def test_bad_rows_name_line_and_field(row, field):
    with pytest.raises(InputError) as exc:
        parse_case_mix_text(HEADER + row + "\n", "mix.csv", _plans)
    message = str(exc.value)
    assert message.startswith("mix.csv: line 2, " + field), message
    assert "\n" not in message


def test_unknown_column_and_missing_plan_are_reported(tmp_path):
    with pytest.raises(InputError, match="allowed columns"):
        parse_case_mix_text("case_type,cases,plan\nA,1,x.toml\n", "mix.csv", _plans)
    path = tmp_path / "mix.csv"
    path.write_text(HEADER + "A,10,60,0,1,0,0,missing.toml\n")
    with pytest.raises(InputError, match=r"line 2, plan: got 'missing.toml'; no plan file"):
        load_case_mix(path)


def test_duplicate_type_names_are_refused():
    text = HEADER + "A,10,60,0,1,0,0,plans/adult_2l.toml\nA,5,60,0,1,0,0,plans/adult_2l.toml\n"
    with pytest.raises(InputError, match="each case type name appears once"):
        parse_case_mix_text(text, "mix.csv", _plans)


def test_frame_round_trip_keeps_the_mix():
    mix = load_case_mix(YEAR / "fernhollow_casemix.csv")
    frame = case_mix_to_frame(mix)
    again = case_mix_from_frame(frame, mix.plans)
    assert case_mix_to_csv(again) == case_mix_to_csv(mix)
    frame["cases_per_year"] = frame["cases_per_year"].astype(object)
    frame.loc[0, "cases_per_year"] = "many"
    with pytest.raises(InputError, match=r"table: row 1, cases_per_year"):
        case_mix_from_frame(frame, mix.plans)


def test_stretch_phase_is_maintenance_else_longest():
    plan = load_plan(YEAR / "plans" / "adult_2l.toml")
    assert plan.phases[stretch_phase(plan)].name == "maintenance"
    renamed = plan.with_phase(1, name="steady")
    assert stretch_phase(renamed) == 1


def test_blank_rows_in_an_edited_table_are_skipped():
    mix = load_case_mix(YEAR / "fernhollow_casemix.csv")
    frame = pd.concat([case_mix_to_frame(mix), pd.DataFrame([{c: None for c in case_mix_to_frame(mix).columns}])])
    assert len(case_mix_from_frame(frame, mix.plans).types) == len(mix.types)


def test_a_plan_with_an_end_tidal_target_is_a_valid_case_type():
    # The year runs plans through the circle model, which finds the dial for a target.
    text = HEADER + "Laparotomy,100,150,0.4,1,0,0,plans/adult_target_2l.toml\n"
    t = parse_case_mix_text(text, "mix.csv", _plans).types[0]
    assert t.plan.phases[t.stretch_index].mode == "target"


@pytest.mark.parametrize(
    "name",
    ['=HYPERLINK("http://example.invalid","x")', "@SUM(A1:A2)", " =1+1", "\u00a0+1", "'=already quoted"],
)
def test_the_case_mix_csv_neutralises_formula_names_and_reads_them_back(name):
    # The Department year page's "Case mix (CSV)" download is case_mix_to_csv.
    from dataclasses import replace

    mix = load_case_mix(YEAR / "fernhollow_casemix.csv")
    hostile = replace(mix, types=(replace(mix.types[0], name=name), *mix.types[1:]))
    text = case_mix_to_csv(hostile)
    import csv
    import io

    cell = next(r for r in list(csv.reader(io.StringIO(text)))[1:] if r)[0]
    assert cell == "'" + name  # a spreadsheet shows it as text, never runs it
    again = parse_case_mix_text(text, "mix.csv", lambda n, w: mix.plans[n] if n in mix.plans else _plans(n, w))
    assert again.types[0].name == name.strip()


@pytest.mark.parametrize(
    "sevo, des, n2o, want",
    [
        # Reference: pint's definitions (percent = 0.01, ppm = 1e-6); a plain number is a fraction.
        ("99.5 percent", "0.5 percent", "0.5 percent", (0.995, 0.005, 0.005)),
        ('"999000 ppm"', '"1000 ppm"', '"1 ppm"', (0.999, 0.001, 1e-6)),
        ("0.6", "0.4", "0.25", (0.6, 0.4, 0.25)),
    ],
)
def test_shares_in_percent_or_ppm_keep_their_meaning(sevo, des, n2o, want):
    text = HEADER + f"Hernia,100,60,0.3,{sevo},{des},{n2o},plans/adult_2l.toml\n"
    t = parse_case_mix_text(text, "mix.csv", _plans).types[0]
    got = (t.agent_shares["sevoflurane"], t.agent_shares["desflurane"], t.n2o_share)
    assert got == pytest.approx(want, rel=1e-12)


@pytest.mark.parametrize(
    "row, field",
    [
        ("Hernia,10,60,0.3,1,0,0,plans/adult_2l.toml,80 %", "weight"),
        ("Hernia,10,60 ppm,0.3,1,0,0,plans/adult_2l.toml,80", "median_duration"),
        ("Hernia,10,60,0.3,1,0,0.1 L/min,plans/adult_2l.toml,80", "n2o_share"),
    ],
)
def test_a_unit_of_another_dimension_is_refused_naming_line_and_field(row, field):
    with pytest.raises(InputError) as exc:
        parse_case_mix_text(HEADER.rstrip("\n") + ",weight\n" + row + "\n", "mix.csv", _plans)
    message = str(exc.value)
    assert message.startswith("mix.csv") and "line 2" in message and field in message, message
