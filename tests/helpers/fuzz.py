"""Example settings of the fuzz tests, and the verdict on a store file they made.

The examples are derandomized, and so repeatable, under the ``ci`` Hypothesis profile
(tests/conftest.py); the ``fuzz`` profile raises every count to its own.
"""

from __future__ import annotations

import hashlib
from pathlib import Path

from hypothesis import HealthCheck, settings

FUZZ = settings(
    max_examples=1000,
    deadline=None,
    suppress_health_check=[
        HealthCheck.too_slow,
        HealthCheck.data_too_large,
        HealthCheck.filter_too_much,
        HealthCheck.function_scoped_fixture,
    ],
)
#: For readers that take a tenth of a second an example (duckdb, SQLite).
SLOW = settings(FUZZ, max_examples=80)


def store_refused_untouched_or_works(path: Path) -> None:
    """Open a store file: refused with one line and left as it was, or it works."""
    from model.base.errors import InputError
    from model.store import Store, StoreError

    before = hashlib.sha256(path.read_bytes()).hexdigest()
    try:
        s = Store(path)
    except StoreError as exc:
        assert "\n" not in str(exc)
        assert hashlib.sha256(path.read_bytes()).hexdigest() == before
        return
    try:  # accepted: it works, or refuses with the store's own error, never a traceback
        s.names("scenario")
        s.save("plan", "fuzz", "x")
        assert s.get("plan", "fuzz").body == "x"
    except InputError:
        pass
