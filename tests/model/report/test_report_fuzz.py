"""Fuzzed emissions reports (hypothesis): periods with zero anaesthetic hours, tiny flows.

The invariant: the report's use-based totals equal an independent computation from the
records (Dion's formula and the ideal gas law, worked out here), its decomposition adds up
to the change, and no sentence, table or JSON holds nan or inf.
"""

from __future__ import annotations

import json
from datetime import datetime, timedelta

import pytest
from hypothesis import given
from hypothesis import strategies as st

from model.audit.engine import audit_records
from model.base.jsonable import infinite_paths
from model.reference import DEFAULT_REFERENCE
from model.report import build_report, parse_period
from model.report.lmdi import RESIDUAL_ABS_KG, RESIDUAL_REL
from tests.helpers.fuzz import SLOW, assert_no_non_finite, tiny

AGENTS = ("sevoflurane", "desflurane", "isoflurane")
flow = st.one_of(st.just(0.0), tiny, st.floats(0.0, 5.0))


@st.composite
def _case(draw, year):
    samples = draw(st.sampled_from([1, 1, 2, 5, 12]))  # one sample: no minutes at all
    return (
        year,
        draw(st.sampled_from(AGENTS)),
        samples,
        draw(flow),
        draw(flow),
        draw(st.one_of(st.just(0.0), flow)),
        draw(st.one_of(st.just(0.0), tiny, st.floats(0.0, 5.0))),  # isoflurane dials go up to 5 %
    )


def _write(tmp_path, cases):
    lines = ["case_id,time,theatre,agent,o2,air,n2o,dial"]
    for i, (year, agent, samples, o2, air, n2o, dial) in enumerate(cases):
        start = datetime(year, 3, 1, 8) + timedelta(days=i)
        for k in range(samples):  # one sample a minute: every minute is counted
            t = (start + timedelta(minutes=k)).isoformat()
            lines.append(f"C{i},{t},Alder,{agent},{o2!r},{air!r},{n2o!r},{dial!r}")
    path = tmp_path / "r.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def _independent_kg(cases, year) -> float:
    """CO2e of the year's cases [kg]: Dion's formula and the ideal gas law at 20 °C, 101.325 kPa.

    Sources: Dion P., Can J Anaesth 1992;39:633-4; R = 8.314462618 J/(mol K) (CODATA 2018);
    GWP100 of IPCC AR6 (the reference table). Every delivered gram counts as emitted.
    """
    ref = DEFAULT_REFERENCE
    molar_volume_l = 8.314462618 * 293.15 / 101.325
    total = 0.0
    for y, agent, samples, o2, air, n2o, dial in cases:
        if y != year:
            continue
        minutes = samples - 1
        a = ref.agents[agent]
        vapour_ml = (o2 + air + n2o) * 1000.0 * dial / 100.0 * minutes
        liquid_ml = vapour_ml / (a.liquid_density / a.molar_mass * molar_volume_l * 1000.0)
        agent_kg = liquid_ml * a.liquid_density / 1000.0
        n2o_kg = n2o * minutes / molar_volume_l * ref.agents["nitrous_oxide"].molar_mass / 1000.0
        total += agent_kg * ref.gwp(agent, "ar6_gwp100") + n2o_kg * ref.gwp("nitrous_oxide", "ar6_gwp100")
    return total


@SLOW
@given(
    base=st.lists(_case(2025), min_size=1, max_size=4),
    now=st.lists(_case(2026), min_size=1, max_size=4),
)
def test_a_report_with_zero_hour_periods_adds_up_and_prints_no_nan(tmp_path_factory, base, now):
    cases = base + now
    path = _write(tmp_path_factory.mktemp("r"), cases)
    audit = audit_records([path])
    r = build_report(audit.cases, parse_period("2026"), parse_period("2025"))
    assert r.problems == []
    for pr, year in ((r.period, 2026), (r.baseline, 2025)):
        assert pr.co2e_t * 1000.0 == pytest.approx(_independent_kg(cases, year), rel=1e-9, abs=1e-12)
    d = r.decomposition
    assert abs(d.residual_kg) <= RESIDUAL_REL * (abs(d.baseline_kg) + abs(d.period_kg)) + RESIDUAL_ABS_KG
    data = r.to_dict()
    assert infinite_paths(data) == []
    assert_no_non_finite(r.headline())
    for _, sentence in r.sentences():
        assert_no_non_finite(sentence)
    assert_no_non_finite(json.dumps(data, allow_nan=False, default=str))
