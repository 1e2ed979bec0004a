"""Names from a user's file reach the terminal with control characters shown, never obeyed."""

from __future__ import annotations

import json
import re
from pathlib import Path

from tests.helpers.cli import run
from tests.helpers.records import constant_case, write_records

PLANS = Path(__file__).resolve().parents[3] / "demo_data" / "plans"

# What a terminal acts on: ESC starts an escape sequence (ECMA-48: CSI is ESC [ or the C1
# byte U+009B, OSC is ESC ]), BEL ends an OSC, CR returns to the line's start, and the
# bidirectional override U+202E reverses what follows (Unicode Standard Annex #9).
ACTED_ON = re.compile("[\x00-\x08\x0b-\x1f\x7f-\x9f\u202a-\u202e\u2066-\u2069]")
HOSTILE = "Lap\x1b[2J\x1b]0;owned\x07 chole\x9b31m\r\u202e"


def _plan(tmp_path, name, phase):
    text = (PLANS / "lap_chole_low_flow.toml").read_text(encoding="utf-8")
    text = text.replace('name = "Laparoscopic cholecystectomy, low flow"', f"name = {json.dumps(name)}")
    text = text.replace('name = "induction"', f"name = {json.dumps(phase)}", 1)
    p = tmp_path / "plan.toml"
    p.write_text(text, encoding="utf-8")
    return p


def test_case_prints_plan_and_phase_names_with_controls_escaped(tmp_path, capsys):
    status, out, err = run(["case", _plan(tmp_path, HOSTILE, "induc\x1b[31mtion")], capsys)
    assert status == 0, err
    assert not ACTED_ON.search(out + err)
    assert "Lap\\x1b[2J\\x1b]0;owned\\x07 chole\\x9b31m\\x0d\\u202e" in out
    assert "induc\\x1b[31mtion" in out


def test_case_json_escapes_c1_and_bidi_controls_and_keeps_the_text(tmp_path, capsys):
    status, out, err = run(["case", _plan(tmp_path, HOSTILE, "induc\x9btion"), "--json"], capsys)
    assert status == 0, err
    assert not ACTED_ON.search(out)
    data = json.loads(out)  # still valid JSON, and a JSON reader gets the text back
    assert data["phases"][0]["phase"] == "induc\x9btion"


def test_audit_prints_theatre_names_with_controls_escaped(tmp_path, capsys):
    rows = constant_case("c1", 30, 1.0, 1.0, 0.0, 2.0, "sevoflurane", theatre="Al\x1b[8mder\u202e")
    status, out, err = run(["audit", write_records(tmp_path, rows)], capsys)
    assert status == 0, err
    assert not ACTED_ON.search(out + err)
    assert "Al\\x1b[8mder\\u202e" in out
