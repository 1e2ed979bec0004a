"""``gas-ledger feedback``: pseudonyms only in every output, the key required, the minimum of cases."""

import json
from pathlib import Path

import pytest

from model.audit import audit_records
from model.cli import main

ROOT = Path(__file__).resolve().parents[3]
RECORDS = str(ROOT / "demo_data" / "records" / "fernhollow_2026.parquet")
NAMES = ["Dr Ash", "Dr Beech", "Dr Elm", "Dr Oak", "Dr Yew"]


@pytest.fixture(scope="module")
def files(tmp_path_factory):
    d = tmp_path_factory.mktemp("feedback")
    ids = sorted(audit_records([RECORDS]).cases["case_id"].unique())
    # Invented anaesthetists: four share the cases, Dr Yew has 5.
    rows = ["case_id,anaesthetist"] + [f"{c},{'Dr Yew' if i < 5 else NAMES[i % 4]}" for i, c in enumerate(ids)]
    (d / "staff.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
    (d / "key.txt").write_text("fernhollow-demo-key-not-for-use\n", encoding="utf-8")
    (d / "short.txt").write_text("abc\n", encoding="utf-8")
    (d / "html").mkdir()
    return d


def _args(d, *more):
    return ["feedback", RECORDS, "--staff", str(d / "staff.csv"), "--key-file", str(d / "key.txt"), *more]


def _no_names(text):
    for n in NAMES:
        assert n.casefold() not in text.casefold()
    assert "fernhollow-demo-key" not in text


def test_the_list_and_a_person_show_pseudonyms_only(files, capsys):
    assert main(_args(files)) == 0
    listed = capsys.readouterr().out
    _no_names(listed)
    assert listed.count("P-") == 4  # Dr Yew, under 20 cases, is not listed
    assert main(_args(files, "--person", "Dr Ash", "--json")) == 0
    out = capsys.readouterr().out
    _no_names(out)
    data = json.loads(out)
    assert data["feedback"][0]["shown"] and len(data["feedback"][0]["months"]) == 12


def test_html_reports_carry_no_name(files, capsys):
    assert main(_args(files, "--html-dir", str(files / "html"))) == 0
    written = sorted((files / "html").glob("feedback_P-*.html"))
    assert len(written) == 4
    for f in written:
        _no_names(f.read_text(encoding="utf-8"))
    _no_names(capsys.readouterr().out)


def test_a_person_under_the_minimum_is_not_shown(files, capsys):
    assert main(_args(files, "--person", "Dr Yew")) == 0
    out = capsys.readouterr().out
    assert "fewer than 20 cases" in out and "department_median" not in out
    _no_names(out)


def test_the_key_is_required(files, capsys):
    base = ["feedback", RECORDS, "--staff", str(files / "staff.csv"), "--key-file"]
    assert main([*base, str(files / "short.txt")]) == 2
    assert "pseudonym key" in capsys.readouterr().err
    assert main([*base, str(files / "missing.txt")]) == 2
    assert "--key-file" in capsys.readouterr().err
