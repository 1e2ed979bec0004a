"""The compiled pass of the file-by-file audit gives the numpy path's results to the last bit.

The reference is the numpy engine of the same project, itself checked against duckdb's SQL
(tests/model/audit/test_engines.py) and against the case plan's formulas (tests/model/audit/test_audit.py,
tests/test_audit_absorbent.py); here the two paths must agree exactly, not to a tolerance.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import model.audit.memory as memory
from model.audit.engine import audit_records
from model.audit.kernel import case_sums
from model.cli.synth import generate, write
from model.freshgas import FLOW_BANDS


def _audit(path, compiled: bool, monkeypatch, **kw):
    """The file-by-file audit with the compiled pass (checked to be taken) or without it."""
    seen = []
    real = memory._compiled_pass

    def spy(*a, **k):
        out = real(*a, **k) if compiled else None
        seen.append(out is not None)
        return out

    with monkeypatch.context() as m:
        m.setattr(memory, "_compiled_pass", spy)
        result = audit_records([path], engine="files", **kw)
    assert seen == [compiled]
    return result


def _identical(a, b):
    pd.testing.assert_frame_equal(a.cases, b.cases, check_exact=True)
    assert a.report.summary() == b.report.summary()
    pd.testing.assert_frame_equal(a.report.issues, b.report.issues)
    pd.testing.assert_frame_equal(a.report.gap_list, b.report.gap_list)


@pytest.mark.slow
@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(
    seed=st.integers(0, 10_000),
    edge_flows=st.booleans(),
    et_basis=st.floats(0, 0.5),
    drop=st.integers(0, 30),
    high_flow=st.sampled_from([2.0, 4.0, 6.0]),
)
def test_compiled_and_numpy_paths_agree_exactly(
    tmp_path_factory, monkeypatch, seed, edge_flows, et_basis, drop, high_flow
):
    rng = np.random.default_rng(seed)
    df = generate(1500, seed=seed)
    if edge_flows:
        # Flows exactly at the band edges (a flow at an edge is in the lower band) and at the high-flow limit.
        edges = [upper for _, upper in FLOW_BANDS[:-1]] + [high_flow]
        at = rng.choice(len(df), size=200, replace=False)
        df.loc[at, "o2 [L/min]"] = rng.choice(edges, size=200)
        df.loc[at, ["air [L/min]", "n2o [L/min]"]] = 0.0
    # Some samples with only an end-tidal value (the dose then comes from it).
    et_only = rng.random(len(df)) < et_basis
    df.loc[et_only & (df["agent"] != "none"), "dial [%]"] = np.nan
    # Gaps: a run of samples missing.
    if drop:
        start = int(rng.integers(0, len(df) - drop))
        df = df.drop(index=range(start, start + drop)).reset_index(drop=True)
    path = write(df, tmp_path_factory.mktemp("k") / "r.parquet")
    _identical(
        _audit(path, True, monkeypatch, high_flow_l_min=high_flow),
        _audit(path, False, monkeypatch, high_flow_l_min=high_flow),
    )


@pytest.mark.slow
def test_samples_out_of_order_are_left_to_the_numpy_path():
    # A case whose times go back, a case split in two runs, agents not grouped: no compiled result.
    common = dict(
        n_agents=2,
        none_code=-1,
        gap_limit_min=10.0,
        high_flow_l_min=4.0,
        minute_ventilation_l_min=6.0,
        band_edges_l_min=np.array([0.25, 0.5, 1.0, 2.0, 4.0]),
    )
    ones = np.ones(3)

    def args(code, agent, t):
        return (np.array(code), np.array(agent), np.array(t, float), ones, ones, ones, ones, ones)

    assert case_sums(*args([0, 0, 0], [0, 0, 0], [0, 2, 1]), **common) is None  # time goes back
    assert case_sums(*args([0, 0, 0], [0, 0, 0], [0, 1, 1]), **common) is None  # duplicate time
    assert case_sums(*args([0, 1, 0], [0, 0, 0], [0, 1, 2]), **common) is None  # case 0 in two runs
    assert case_sums(*args([0, 0, 0], [1, 0, 1], [0, 1, 2]), **common) is None  # agents interleaved
    assert case_sums(*args([0, 0, 1], [0, 1, 0], [0, 1, 0]), **common) is not None


def test_a_hand_worked_case():
    # One case, samples at 0, 1, 2 and 15 min (gap limit 10 min), O2 1 L/min then 5 L/min,
    # dial 2 %: minutes 2, O2 1x1 + 5x1 = 6 L, vapour 1x2x1 + 5x2x1 = 12 L/min.%.min, one gap
    # of 13 min, the high-flow run (over 4 L/min) 1 min. Arithmetic by hand.
    t = np.array([0.0, 1.0, 2.0, 15.0])
    o2 = np.array([1.0, 5.0, 5.0, 5.0])
    z = np.zeros(4)
    first, samples, gaps, sums, band_min, gap = case_sums(
        np.zeros(4, np.int64),
        np.zeros(4, np.int64),
        t,
        o2,
        z,
        z,
        np.full(4, 2.0),
        z,
        n_agents=1,
        none_code=-1,
        gap_limit_min=10.0,
        high_flow_l_min=4.0,
        minute_ventilation_l_min=6.0,
        band_edges_l_min=np.array([0.25, 0.5, 1.0, 2.0, 4.0]),
    )
    assert list(first) == [0] and list(samples) == [4] and list(gaps) == [1]
    assert list(gap) == [False, False, True, False]
    minutes, gap_min, et_min, o2_l, air_l, n2o_l, vapour, rebreathed, longest = sums[0]
    assert (minutes, gap_min, et_min, o2_l, vapour, longest) == (2.0, 13.0, 0.0, 6.0, 12.0, 1.0)
    # Rebreathed share max(1 - FGF/VE, 0) (common practice, no source): 5/6 for 1 min + 1/6 for 1 min.
    assert rebreathed == pytest.approx(5 / 6 + 1 / 6)
    # Flow bands: 1 L/min is at the "low" edge (in that band), 5 L/min is "very high".
    assert list(band_min[0]) == [0, 0, 1.0, 0, 0, 1.0]


_ONE_BAD_ROW = {
    # A row the SQL row checks set aside (model.io.records): the fast checks must refuse the file.
    "negative flow": {"o2 [L/min]": -0.5},
    "flow over 20 L/min": {"o2 [L/min]": 20.5},
    "total over 30 L/min": {"o2 [L/min]": 15.0, "air [L/min]": 15.0, "n2o [L/min]": 1.0},
    "no flow at all": {"o2 [L/min]": np.nan, "air [L/min]": np.nan, "n2o [L/min]": np.nan},
    "flow not finite": {"air [L/min]": np.inf},
    "dial over the agent's highest": {"dial [%]": 99.0},
    "negative end-tidal": {"end_tidal [%]": -1.0},
    "volatile without dial or end-tidal": {"dial [%]": np.nan, "end_tidal [%]": np.nan},
    "unknown agent": {"agent": "argon"},
    "missing case id": {"case_id": " "},
}


@pytest.mark.parametrize("kind", sorted(_ONE_BAD_ROW))
def test_one_bad_row_sends_the_file_to_the_sql_checks(tmp_path, kind):
    from model.io.records import read_records

    df = generate(800, seed=4).astype({"agent": str, "case_id": str})
    row = int(np.flatnonzero(df["agent"].to_numpy() == "sevoflurane")[10])
    for col, value in _ONE_BAD_ROW[kind].items():
        df.loc[row, col] = value
    path = write(df, tmp_path / "r.parquet")
    recs = read_records([path])
    try:
        assert memory.read_parquet_file(recs, 0)[0] is None
    finally:
        recs.close()
    a, b = audit_records([path], engine="files"), audit_records([path], engine="sql")
    assert a.report.rows_set_aside == b.report.rows_set_aside == 1
    pd.testing.assert_frame_equal(a.cases, b.cases, check_exact=False, rtol=1e-12, check_dtype=False)


def test_a_clean_file_takes_the_fast_reading(tmp_path):
    from model.io.records import read_records

    recs = read_records([write(generate(800, seed=4), tmp_path / "r.parquet")])
    try:
        assert memory.read_parquet_file(recs, 0)[0] is not None
    finally:
        recs.close()


def test_a_clean_parquet_audit_never_opens_duckdb(tmp_path, monkeypatch):
    # The compiled path needs no SQL: duckdb's connection (and its views) open only when a
    # query needs them, e.g. for a file with a bad row.
    import model.io.duckdb_connection as duck

    opened = []
    real = duck.connect
    monkeypatch.setattr(duck, "connect", lambda *a, **k: opened.append(1) or real(*a, **k))
    clean = write(generate(1500, seed=6), tmp_path / "clean.parquet")
    result = audit_records([clean], engine="files", memory_limit="2GB")
    assert opened == [] and result.report.rows_read == 1500
    df = generate(1500, seed=6).astype({"agent": str})
    df.loc[7, "agent"] = "argon"
    messy = write(df, tmp_path / "messy.parquet")
    result = audit_records([messy], engine="files")
    assert opened == [1] and result.report.set_aside["unknown_agent"] == 1


@pytest.mark.parametrize(
    "size", ["3GB", "3 gb", "1.5GB", "500MB", "3GiB", "100KB", "1TB", "1000B", "3G", "2M", "80%", "3 bytes"]
)
def test_memory_limits_kept_for_later_are_ones_duckdb_takes(size):
    # Reference: duckdb itself (its SET memory_limit parser); a size our check lets wait
    # must not fail when the connection opens later.
    import duckdb

    from model.io.duckdb_connection import plain_size

    assert plain_size(size)
    duckdb.connect().execute(f"SET memory_limit = '{size}'")


def test_a_memory_limit_duckdb_refuses_is_told_at_once(tmp_path):
    from model.base.errors import InputError

    path = write(generate(300, seed=1), tmp_path / "r.parquet")
    for bad in ("lots", "3", "3 parsecs"):
        with pytest.raises(InputError, match="memory-limit"):
            audit_records([path], memory_limit=bad)


def test_loading_the_kernels_first_leaves_the_demo_audit_nothing_to_compile():
    # serve.py's warm start calls load_kernels(); the first audit after it must find the
    # machine code of every loop it runs, for a Parquet file (read-only Arrow columns) and a
    # CSV file, already loaded: no new signature is added by the audit.
    pytest.importorskip("numba")
    from model.audit import kernel
    from tests.helpers import ROOT

    kernel._compiled.clear()
    assert kernel.load_kernels() is True
    loaded = {name: set(d.signatures) for name, d in kernel._compiled.items()}
    assert set(loaded) == {"checks", "scan", "groups"}
    demo = ROOT / "demo_data" / "records"
    audit_records([demo / "fernhollow_2025.parquet"])
    audit_records([demo / "fernhollow_birch_cases.csv"])
    assert {name: set(d.signatures) for name, d in kernel._compiled.items()} == loaded
