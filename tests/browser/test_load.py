"""The dashboard under load: 20 simulated users each plan a case, and none sees an error.

Runs ``benchmarks/bench_load.py``'s driver: ``streamlit run serve.py`` on a free loopback port
with a store of its own (``GAS_LEDGER_STORE`` names a temporary file), one headless Debian
chromium, 20 sessions, 5 at a time, each opening the case-plan page and changing the
maintenance O2 flow to a value of its own. Bounded in count and time; response times are
reported by the benchmark, never asserted here.
"""

import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT / "benchmarks"))

from bench_load import run_load  # noqa: E402

SESSIONS = 20
CONCURRENCY = 5


@pytest.mark.browser
@pytest.mark.browser_alone  # 20 sessions, 5 at a time: the machine to itself
@pytest.mark.timeout(900)
def test_twenty_sessions_plan_a_case_without_errors(tmp_path):
    store = tmp_path / "store.sqlite3"
    run = run_load(SESSIONS, CONCURRENCY, timeout_s=90.0, store_path=store)

    assert len(run.sessions) == SESSIONS
    problems = [f"session {s.index}: {'; '.join(s.errors) or 'figure did not change'}" for s in run.failures]
    assert not problems, "\n".join(problems)
    # Each session asked for its own flow, so each saw a new figure of its own.
    assert all(s.after and s.after != s.before for s in run.sessions)
    assert len({s.after for s in run.sessions}) > 1
    # The server logged no unhandled exception.
    assert "Traceback" not in run.server_log, run.server_log[-3000:]
    # The sessions used the isolated store, not the user's.
    assert store.exists()
