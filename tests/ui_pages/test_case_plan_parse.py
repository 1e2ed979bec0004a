"""Case plan page: a typed value is parsed into a plan once, and the caches are keyed on that plan."""

from __future__ import annotations

import pytest
import streamlit as st

import model.io.plans
from tests.helpers.pages import page


@pytest.fixture
def plan_reads(monkeypatch) -> list[str]:
    """The sources of every plan read (``plan_from_dict``, which ``parse_plan_text`` calls too)."""
    calls: list[str] = []
    real = model.io.plans.plan_from_dict

    def counted(data, source="", reference=None):
        calls.append(source)
        return real(data, source, reference)

    monkeypatch.setattr(model.io.plans, "plan_from_dict", counted)
    return calls


def test_a_changed_value_is_parsed_once_per_rerun(plan_reads):
    at = page("case_plan.py")
    plan_reads.clear()
    # A weight no other test types, so no cache of this process holds its plan.
    at.text_input(key="cp_weight").set_value("77.125 kg")
    at.run()
    assert not at.exception, [e.message for e in at.exception]
    # One plan shown (the typed one; the baseline of the deltas is the plan as opened, already
    # a plan): one read of the typed inputs, none of plan-file text made from them.
    assert len(plan_reads) == 1, plan_reads
    # The value was read and is the plan the figures are of.
    assert at.session_state["cp_current_plan"].patient.weight_kg == 77.125


def test_a_rerun_without_a_change_parses_nothing(plan_reads):
    at = page("case_plan.py")
    at.text_input(key="cp_weight").set_value("77.375 kg")
    at.run()
    plan_reads.clear()
    at.run()
    assert not at.exception, [e.message for e in at.exception]
    assert plan_reads == []


def test_opening_a_saved_plan_reads_its_text_once_and_the_inputs_once(plan_reads):
    at = page("case_plan.py")
    names = at.selectbox(key="cp_open_name").options
    other = next(n for n in names if n != at.selectbox(key="cp_open_name").value)
    at.selectbox(key="cp_open_name").select(other)
    at.run()
    st.cache_data.clear()  # another test may have opened this plan in this process
    plan_reads.clear()
    next(b for b in at.button if b.label == "Open").click()
    at.run()
    assert not at.exception, [e.message for e in at.exception]
    # The stored plan file, then the inputs it filled in; the baseline of the deltas is the
    # stored plan itself, and nothing is written out as plan-file text to be read back.
    assert len(plan_reads) == 2, plan_reads
    assert plan_reads[0].startswith(f"stored plan '{other}'") and plan_reads[1] == ""
    assert at.session_state["cp_current_plan"].name == other
