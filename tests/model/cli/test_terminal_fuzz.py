"""Fuzzed names with terminal control characters: the command line shows them, never obeys them.

Invariants, for plan, phase and theatre names holding C0 and C1 controls, escape
sequences and bidirectional controls: no traceback; nothing written to standard output or
error holds a character a terminal would act on (``ACTED_ON`` of
tests/model/cli/test_terminal_text.py); ``--json`` stays valid JSON with the names intact.
"""

from __future__ import annotations

import json

from hypothesis import given, settings
from hypothesis import strategies as st

from tests.helpers.cli import run
from tests.helpers.fuzz import SLOW, names_with_controls
from tests.helpers.records import constant_case, write_records
from tests.model.cli.test_terminal_text import ACTED_ON, _plan

CLI = settings(SLOW, max_examples=30)


def _clean(status, out, err):
    assert status in (0, 2), err
    assert "Traceback" not in err
    assert not ACTED_ON.search(out), out
    assert not ACTED_ON.search(err), err
    if status == 2:
        assert len([line for line in err.splitlines() if line.strip()]) == 1, err


@CLI
@given(names_with_controls(), names_with_controls(), st.booleans())
def test_case_with_control_characters_in_plan_and_phase_names(tmp_path_factory, capsys, name, phase, as_json):
    folder = tmp_path_factory.mktemp("plan")
    status, out, err = run(["case", _plan(folder, name, phase), *(["--json"] if as_json else [])], capsys)
    _clean(status, out, err)
    if status == 0 and as_json:
        data = json.loads(out)
        assert data["phases"][0]["phase"] == phase.strip()  # the plan reader trims names


@settings(SLOW, max_examples=15)
@given(names_with_controls())
def test_audit_with_control_characters_in_theatre_names(tmp_path_factory, capsys, theatre):
    folder = tmp_path_factory.mktemp("records")
    rows = constant_case("c1", 20, 1.0, 1.0, 0.0, 2.0, "sevoflurane", theatre=theatre)
    status, out, err = run(["audit", write_records(folder, rows)], capsys)
    _clean(status, out, err)
