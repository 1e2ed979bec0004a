"""The command line on files it cannot use (too deep, impossible or over-long names): exit 2 with one line."""

from __future__ import annotations

from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[3]


BIRCH = ROOT / "demo_data" / "records" / "fernhollow_birch_cases.csv"


def _write(path: Path, data: bytes) -> Path:
    path.write_bytes(data)
    return path


def _cli(argv, capsys):
    from model.cli import main

    try:
        status = main([str(a) for a in argv])
    except SystemExit as exc:
        status = exc.code
    out, err = capsys.readouterr()
    return status, out, err


DEEP_HEADER = "\n[a" + ".b" * 1000 + "]\n"


@pytest.mark.parametrize(
    "command, demo",
    [
        ("case", ROOT / "demo_data" / "plans" / "lap_chole_low_flow.toml"),
        ("sweep", ROOT / "demo_data" / "plans" / "lap_chole_low_flow.toml"),
        ("year", ROOT / "demo_data" / "year" / "baseline_2l.toml"),
    ],
)
def test_deep_toml_table_header_exits_2_with_one_line(tmp_path, capsys, command, demo):
    path = demo.parent / f"_deep_{tmp_path.name}.toml"  # beside the demo, so its case mix is found
    try:
        path.write_text(demo.read_text() + DEEP_HEADER, encoding="utf-8")
        status, out, err = _cli([command, path], capsys)
    finally:
        path.unlink()
    assert status == 2
    assert err.count("\n") == 1 and "deep" in err and "Traceback" not in err


def test_deep_settings_file_exits_2(tmp_path, capsys):
    settings = _write(tmp_path / "s.toml", ("[prices]\ncurrency = 'EUR'" + DEEP_HEADER).encode())
    status, out, err = _cli(["--settings", settings, "reference"], capsys)
    assert status == 2 and "deep" in err


@pytest.mark.parametrize(
    "plan_cell", ["p" * 300 + ".toml", "plans/" + "q" * 300 + ".toml", "plans/a\x00b.toml", "/proc/self/mem/x.toml"]
)
def test_case_mix_naming_an_impossible_plan_path_exits_2(tmp_path, capsys, plan_cell):
    import csv
    import io
    import shutil

    year = ROOT / "demo_data" / "year"
    shutil.copytree(year, tmp_path / "year")
    mix = tmp_path / "year" / "fernhollow_casemix.csv"
    rows = list(csv.reader(io.StringIO(mix.read_text(encoding="utf-8"))))
    header = next(i for i, r in enumerate(rows) if r and not r[0].startswith("#"))
    col = rows[header].index("plan")
    rows[header + 1][col] = plan_cell
    out = io.StringIO()
    csv.writer(out, lineterminator="\n").writerows(rows)
    mix.write_text(out.getvalue(), encoding="utf-8")
    status, _, err = _cli(["year", tmp_path / "year" / "baseline_2l.toml"], capsys)
    assert status == 2 and err.count("\n") == 1 and "plan" in err


@pytest.mark.parametrize(
    "args",
    [
        ["audit", "r" * 300 + ".csv"],
        ["audit", BIRCH, "--purchases", "p" * 300 + ".csv"],
        ["case", "c" * 300 + ".toml"],
        ["year", "y" * 300 + ".toml"],
    ],
)
def test_over_long_file_names_on_the_command_line_exit_2(capsys, args):
    status, _, err = _cli(args, capsys)
    assert status == 2 and err.count("\n") == 1
