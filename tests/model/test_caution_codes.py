"""Each caution of a case carries a code; results read flags from codes, never from wording."""

from __future__ import annotations

import pickle
from dataclasses import replace
from pathlib import Path

import pytest

from model.case import compute_case
from model.cautions import (
    CAUTION_CODES,
    LOW_INSPIRED_O2,
    RATIO_ALTERED,
    SEVOFLURANE_LOW_FLOW_CODES,
    SEVOFLURANE_LOW_FLOW_LONG,
    Caution,
    code_of,
)
from model.io.plans import load_plan

DEMO = Path(__file__).resolve().parents[2] / "demo_data" / "plans"


@pytest.mark.parametrize("name", ["lap_chole_low_flow", "lap_chole_high_flow", "hip_desflurane_n2o"])
def test_every_caution_of_a_demo_case_has_a_known_code(name):
    result = compute_case(load_plan(DEMO / f"{name}.toml"))
    assert all(code_of(w) in CAUTION_CODES for w in result.warnings), [(code_of(w), w) for w in result.warnings]


def test_the_sevoflurane_flag_follows_the_codes():
    # Source: sevoflurane labelling in some countries (a minimum flow, 2 L/min beyond
    # 1 MAC-hour), from memory; the demo low-flow plan runs under it.
    low = compute_case(load_plan(DEMO / "lap_chole_low_flow.toml"))
    codes = {code_of(w) for w in low.warnings}
    assert SEVOFLURANE_LOW_FLOW_LONG in codes
    assert low.totals["sevoflurane_low_flow_caution"] is True
    high = compute_case(load_plan(DEMO / "lap_chole_high_flow.toml"))
    assert not {code_of(w) for w in high.warnings} & set(SEVOFLURANE_LOW_FLOW_CODES)
    assert high.totals["sevoflurane_low_flow_caution"] is False


def test_a_phase_named_like_a_sevoflurane_caution_raises_no_sevoflurane_flag():
    # Common practice, no source: the O2/N2O ratio limit (25 % O2 at least) alters 0.3 L/min
    # O2 with 3 L/min N2O; the phase's name, which every caution of it quotes, reads like
    # the sevoflurane caution's wording, and a desflurane case has no such caution.
    plan = load_plan(DEMO / "hip_desflurane_n2o.toml")
    first = replace(
        plan.phases[0], name="sevoflurane at 0.5 L/min", oxygen_l_min=0.3, air_l_min=0.0, nitrous_oxide_l_min=3.0
    )
    result = compute_case(replace(plan, phases=(first, *plan.phases[1:])))
    altered = [w for w in result.warnings if code_of(w) == RATIO_ALTERED]
    assert altered and "sevoflurane at" in altered[0]
    assert result.totals["sevoflurane_low_flow_caution"] is False


def test_a_hypoxic_mixture_is_coded_low_o2():
    # Common practice, no source: 0.5 L/min at 50 % O2 with a VO2 near 0.25 L/min leaves
    # inspired O2 under a 30 % floor (the steady-state mass balance of a circle).
    plan = load_plan(DEMO / "lap_chole_low_flow.toml")
    phases = tuple(
        replace(p, oxygen_l_min=0.25, air_l_min=0.25, nitrous_oxide_l_min=0.0) if p.name == "maintenance" else p
        for p in plan.phases
    )
    result = compute_case(replace(plan, phases=phases))
    low = [w for w in result.warnings if code_of(w) == LOW_INSPIRED_O2]
    assert low and low[0].severity == "hazard" and "hypoxic mixture" in low[0]


def test_a_caution_keeps_its_code_when_joined_and_pickled():
    c = Caution("phase 1: text", "labelling", SEVOFLURANE_LOW_FLOW_LONG)
    for joined in ("Plan A: " + c, c + " (see labelling)", pickle.loads(pickle.dumps(c))):
        assert code_of(joined) == SEVOFLURANE_LOW_FLOW_LONG and joined.severity == "labelling"
    assert code_of("plain text") == "" and code_of(Caution("year caution")) == ""


def test_an_unknown_code_is_refused():
    with pytest.raises(ValueError, match="allowed are"):
        Caution("text", "caution", "no_such_code")
