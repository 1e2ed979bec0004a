"""Numbers and times as people read them: no "3080.0", "+0.00", "-0 %", "-17,172.2 GBP" or raw ISO times."""

from __future__ import annotations

import io

import pandas as pd

from model.present.exports import to_csv
from model.present.readable import money_text, percent_change_text, signed_text, when_text
from tests.helpers import ROOT
from tests.helpers.cli import run

RECORDS = ROOT / "demo_data" / "records"


def test_a_count_in_a_column_of_figures_is_written_whole_in_csv():
    table = pd.DataFrame({"figure": ["Cases", "CO2 absorbent"], "expected": [3080.0, 243.25]})
    text = to_csv(table).decode("utf-8")
    assert "Cases,3080\r\n" in text and "CO2 absorbent,243.25\r\n" in text
    back = pd.read_csv(io.StringIO(text))
    assert back["expected"].tolist() == [3080.0, 243.25]


def test_a_change_that_rounds_to_nothing_has_no_sign():
    assert signed_text(0.001, digits=2) == "0"
    assert signed_text(-0.004, digits=2) == "0"
    assert signed_text(1.25, digits=2) == "+1.25"
    assert percent_change_text(99.7, 100.0) == "0 %"
    assert percent_change_text(88.0, 100.0) == "-12 %"
    assert percent_change_text(5.0, 0.0) == ""


def test_money_is_whole_from_a_thousand_and_two_decimals_under_it():
    assert signed_text(-17172.2, money=True) == "-17,172"
    assert money_text(-17172.2, "GBP", signed=True) == "-17,172 GBP"
    assert money_text(512.4, "GBP") == "512.40 GBP"
    assert money_text(-0.001, "GBP") == "0.00 GBP"


def test_a_stored_time_is_shown_in_words():
    assert when_text("2026-12-04T21:30:05+00:00") == "4 Dec 2026, 21:30 UTC"
    assert when_text("2026-12-04T21:30:05") == "4 Dec 2026, 21:30 UTC"


def test_command_line_tables_are_headed_in_words_and_counts_are_whole(capsys):
    args = ["report", RECORDS / "fernhollow_2025.parquet", RECORDS / "fernhollow_2026.parquet", "--period", "2026"]
    status, out, err = run(args, capsys)
    assert status == 0, err
    by_agent = out.split("By agent (use-based)\n", 1)[1].splitlines()[0]
    assert "_" not in by_agent, by_agent
    assert "1,502.00" not in out and "1,502" in out


def test_sheet_names_are_cut_between_words_and_file_names_are_not_doubled():
    from io import BytesIO

    from openpyxl import load_workbook

    from model.present.exports import to_xlsx
    from ui.common import csv_file_name

    table = pd.DataFrame({"a": [1]})
    wb = load_workbook(BytesIO(to_xlsx({"Bottles and cylinders bought, by theatre and month": table})))
    # Excel takes 31 characters: the name ends at a whole word, never "Bottles and cylinders bought, b".
    assert wb.sheetnames == ["Bottles and cylinders bought"]
    assert csv_file_name("plan comparison", "Comparison") == "plan-comparison.csv"
    assert csv_file_name("year comparison", "Year comparison") == "year-comparison.csv"
    assert csv_file_name("record audit", "Cases") == "record-audit-cases.csv"


def test_a_missing_text_is_a_blank_cell_not_none():
    from model.present.readable import readable_frame

    shown = readable_frame(pd.DataFrame({"note": [None, "kept", float("nan")], "value": [1.5, 2.5, 3.5]}))
    assert shown["note"].tolist() == ["", "kept", ""]
    assert "None" not in to_csv(shown).decode("utf-8")
