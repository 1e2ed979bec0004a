"""Purchase files with broken lines: each set aside alone, the rest read, comments and numbers read as written."""

from __future__ import annotations

from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[3]


BIRCH = ROOT / "demo_data" / "records" / "fernhollow_birch_cases.csv"


def _write(path: Path, data: bytes) -> Path:
    path.write_bytes(data)
    return path


PURCHASE_HEADER = "month,item,quantity,unit,size\n"


PURCHASE_GOOD = [
    "2025-01,sevoflurane,4,bottle,",
    "2025-01,oxygen,20,m**3,",
    "2025-02,desflurane,2,bottle,240 mL",
    "2025-02,nitrous_oxide,1,cylinder,9000 L",
    "2025-03,sevoflurane,100,mL,",
    "2025-03,isoflurane,1,bottle,",
]


def _purchases(tmp_path, name, lines):
    from model.io.purchases import load_purchases

    path = _write(tmp_path / name, (PURCHASE_HEADER + "\n".join(lines) + "\n").encode())
    return path, load_purchases(path)


def _bought(read):
    return read.table.groupby("item")["amount"].sum().to_dict()


@pytest.mark.parametrize(
    "bad_line",
    [
        "2025-02,oxygen,3,m**3,,",  # one trailing comma
        "2025-02,oxygen,3,m**3,,,,",  # several
        "2025-02,oxygen,3,m**3",  # one field short
        '2025-02,"oxygen,3,m**3,',  # an unclosed quote
        "2025-02,oxy\rgen,3,m**3,",  # a lone CR in a cell
    ],
)
def test_broken_purchase_line_is_set_aside_alone(tmp_path, bad_line):
    _, clean = _purchases(tmp_path, "clean.csv", PURCHASE_GOOD)
    path, read = _purchases(tmp_path, "bad.csv", PURCHASE_GOOD[:3] + [bad_line] + PURCHASE_GOOD[3:])
    assert len(read.messages) == 1 and read.messages[0].startswith(f"{path}, line 5")
    assert _bought(read) == pytest.approx(_bought(clean), rel=1e-12)


def test_indented_comment_is_a_comment_and_later_lines_keep_their_numbers(tmp_path):
    lines = PURCHASE_GOOD[:2] + ["   # a note, indented", "\t# another"] + PURCHASE_GOOD[2:] + ["2025-13,oxygen,1,L,"]
    path, read = _purchases(tmp_path, "p.csv", lines)
    # Header line 1, data from line 2: the bad month is the last line of the file.
    assert [str(e).split(":")[0] for e in read.set_aside] == [f"{path}, line {len(lines) + 1}"]
    _, clean = _purchases(tmp_path, "clean.csv", PURCHASE_GOOD)
    assert _bought(read) == pytest.approx(_bought(clean), rel=1e-12)


def test_hash_inside_a_purchase_cell_is_text_not_a_comment(tmp_path):
    # pandas' comment="#" cut this line to "2025-01,sevoflurane,4,bottle," and took the
    # default bottle for a size that was written.
    path, read = _purchases(tmp_path, "p.csv", ["2025-01,sevoflurane,4,bottle,#250 mL"])
    assert read.table.empty
    assert len(read.messages) == 1 and f"{path}, line 2: size" in read.messages[0]
    path, read = _purchases(tmp_path, "q.csv", ['2025-01,sevoflurane,4,bottle,"250 mL"', "#2025-01,oxygen,9,L,"])
    assert read.table["amount"].tolist() == [1000.0] and not read.messages


@pytest.mark.parametrize(
    "line, column",
    [
        ("\uff12\uff10\uff12\uff15-04,oxygen,1,L,", "month"),  # full-width digits
        ("2025-0\u0664,oxygen,1,L,", "month"),  # an Arabic-Indic digit
        ("2025-04,oxygen,\uff11,L,", "quantity"),
    ],
)
def test_non_ascii_digits_in_purchases_are_set_aside(tmp_path, line, column):
    path, read = _purchases(tmp_path, "p.csv", [line, "2025-04,oxygen,1,L,"])
    assert len(read.messages) == 1 and f"{path}, line 2: {column}" in read.messages[0]
    assert read.table["amount"].tolist() == [1.0]


def _cli(argv, capsys):
    from model.cli import main

    try:
        status = main([str(a) for a in argv])
    except SystemExit as exc:
        status = exc.code
    out, err = capsys.readouterr()
    return status, out, err


@pytest.mark.parametrize("quantity", ["1e306", "1e-320", "1e10", "1e308"])
def test_huge_and_tiny_purchase_quantities_give_finite_json(tmp_path, capsys, quantity):
    import json

    p = _write(tmp_path / "p.csv", f"month,item,quantity,unit,size\n2025-09,sevoflurane,{quantity},bottle,\n".encode())
    status, out, err = _cli(["audit", BIRCH, "--purchases", p, "--json"], capsys)
    assert status == 0, err
    assert "Infinity" not in out and "NaN" not in out
    data = json.loads(out)  # strict JSON
    if float(quantity) > 1e9:
        assert len(data["purchase_lines_set_aside"]) == 1
        assert "quantity" in data["purchase_lines_set_aside"][0]
