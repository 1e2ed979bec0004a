"""Fuzzed file names (hypothesis): long or impossible names give one InputError, never an OSError."""

from __future__ import annotations

from hypothesis import given, settings
from hypothesis import strategies as st

from model.base.errors import InputError
from model.io import purchases
from tests.helpers.fuzz import FUZZ

_NAMES = st.one_of(
    st.integers(250, 5000).map(lambda n: "n" * n),
    st.integers(1, 60).map(lambda n: "/".join(["d" * 250] * n)),
    st.sampled_from(
        [
            "a\x00b",
            "/proc/self/mem/x",
            "/dev/null",
            "/",
            ".",
            "..",
            "~nobody/x",
            "/root/../../etc/passwd/x",
            "\u202e.toml",
            "C:\\x\\y",
            "nonexistent/file",
        ]
    ),
    st.text(min_size=1, max_size=300),
)


@settings(FUZZ, max_examples=800)
@given(
    name=_NAMES,
    suffix=st.sampled_from([".toml", ".csv", ".parquet", ""]),
    reader=st.sampled_from(["plan", "scenario", "casemix", "records", "purchases", "settings"]),
)
def test_long_and_impossible_file_names_give_input_error(name, suffix, reader):
    from model.io.case_mix import load_case_mix
    from model.io.plans import load_plan
    from model.io.record_files import inspect_file
    from model.io.scenario import load_scenario
    from model.reference import load_settings

    call = {
        "plan": load_plan,
        "scenario": load_scenario,
        "casemix": load_case_mix,
        "records": inspect_file,
        "purchases": purchases.load_purchases,
        "settings": load_settings,
    }[reader]
    try:
        call(name + suffix)
    except InputError as exc:
        assert "\n" not in str(exc)
