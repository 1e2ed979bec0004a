"""The trends of the demo records: charts, signals in words, the programme's effect, bad change dates."""

import json

import pytest

from model.audit import audit_records
from model.base.errors import InputError
from model.trends import build_trends
from model.trends.spc import rule_signals, signal_sentences, xmr_limits

DEMO = ["demo_data/records/fernhollow_2025.parquet", "demo_data/records/fernhollow_2026.parquet"]


@pytest.fixture(scope="module")
def cases():
    return audit_records(DEMO).cases


def test_the_demo_programme_start_shows_a_drop(cases):
    t = build_trends(cases, "2026-01")
    r = t.effects[("department", "co2e_kg_per_case")]
    assert r.level_ci[1] < 0  # the invented 2026 records use less agent
    saved = t.effects[("department", "co2e_t")]
    assert saved.saved_ci[0] > 0
    assert any("t CO2e" in s and "saved" in s for s in t.effect_sentences())
    # limits by phase: the centre of 2026 is lower than that of 2025
    c = t.charts[(t.charts["measure"] == "co2e_kg_per_case")]
    assert c[c["phase"] == 1]["centre"].iloc[0] < c[c["phase"] == 0]["centre"].iloc[0]
    json.dumps(t.to_dict())


def test_without_a_change_date_the_shift_is_two_runs(cases):
    words = [w for w in build_trends(cases).signals if w.startswith("kg CO2e per case: 8 or more")]
    assert [w.split(", ")[1].split(" (")[0] for w in words] == ["2025-04 to 2025-12", "2026-01 to 2026-11"]


def test_a_run_above_then_below_reads_as_two_signals():
    # centre 10: m07 (11) and the eight 12s above, the eight 8s and m24 (9) below
    x = [9, 11] * 4 + [12] * 8 + [8] * 8 + [9, 11] * 4
    c = xmr_limits(x)
    words = signal_sentences([f"m{i:02d}" for i in range(len(x))], rule_signals(c), "x", c)
    runs = [w for w in words if "8 or more" in w]
    assert [w.split(", ")[1].split(" (")[0] for w in runs] == ["m07 to m15", "m16 to m24"]


@pytest.mark.parametrize("bad", ["2026-13", "January", "2024-06", "2025-01", "2026-1"])
def test_a_bad_change_date_is_a_message(cases, bad):
    with pytest.raises(InputError, match="change date"):
        build_trends(cases, bad)


def test_theatres_get_their_own_charts(cases):
    t = build_trends(cases, "2026-01", level="theatre", measures=("co2e_kg_per_case",))
    assert set(t.charts["group"]) == set(cases["theatre"])


def test_a_theatre_without_a_case_in_the_change_month_still_gets_two_phases(cases):
    # Alder's January 2026 cases removed: its limits change from February, and with a gap in
    # its months no segmented regression is fitted for it (months must follow each other).
    c = cases[~((cases["theatre"] == "Alder") & (cases["month"] == "2026-01"))]
    t = build_trends(c, "2026-01", level="theatre", measures=("co2e_kg_per_case",))
    alder = t.charts[t.charts["group"] == "Alder"]
    assert alder[alder["phase"] == 1]["month"].iloc[0] == "2026-02"
    assert ("Alder", "co2e_kg_per_case") not in t.effects
    assert ("Birch", "co2e_kg_per_case") in t.effects
