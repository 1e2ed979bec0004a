"""Fuzzed settings (hypothesis): a Reference, or one InputError naming the field; never a traceback."""

import os
import tempfile

from hypothesis import assume, given
from hypothesis import strategies as st

from model import Reference, load_settings
from tests.helpers.plan_fuzz import (
    FUZZ,
    STRUCTURED,
    _maybe,
    _numbers,
    _only_input_error,
    _toml_or_none,
    _values,
)

_settings_dicts = st.fixed_dictionaries(
    {},
    optional={
        "prices": st.one_of(
            _maybe(
                {
                    "currency": st.one_of(st.text(max_size=20), _values),
                    "bottle": st.dictionaries(
                        st.sampled_from(["sevoflurane", "desflurane", "oxygen", "xenon", "SEVO", ""]),
                        _values,
                        max_size=3,
                    ),
                    "oxygen_per_1000_l": _numbers,
                    "air_per_1000_l": _numbers,
                    "nitrous_oxide_per_1000_l": _numbers,
                    "absorbent_per_kg": _numbers,
                    "unknown": _values,
                }
            ),
            _values,
        ),
        "agents": st.one_of(
            st.dictionaries(
                st.sampled_from(["sevoflurane", "desflurane", "nitrous_oxide", "xenon", "N2O"]),
                st.one_of(
                    st.dictionaries(
                        st.sampled_from(
                            ["mac40", "molar_mass", "liquid_density", "boiling_point", "lifetime", "colour"]
                        ),
                        _values,
                        max_size=3,
                    ),
                    _values,
                ),
                max_size=3,
            ),
            _values,
        ),
        "gwp": st.one_of(
            st.dictionaries(
                st.sampled_from(["user", "ar6_gwp100", "ar9", ""]),
                st.one_of(
                    st.dictionaries(st.sampled_from(["sevoflurane", "nitrous_oxide", "xenon"]), _values, max_size=3),
                    _values,
                ),
                max_size=2,
            ),
            _values,
        ),
        "other": _values,
    },
)


@STRUCTURED
@given(_settings_dicts)
def test_settings_overrides_give_reference_or_input_error(data):
    result = _only_input_error(Reference().with_overrides, data, "fuzz-settings.toml")
    if result is not None:
        assert isinstance(result, Reference)
        result.table()  # the reference table still builds


def _load_settings_bytes(data: bytes):
    fd, name = tempfile.mkstemp(suffix=".toml")
    try:
        with os.fdopen(fd, "wb") as handle:
            handle.write(data)
        return load_settings(name)
    finally:
        os.unlink(name)


@STRUCTURED
@given(_settings_dicts)
def test_settings_file_with_wrong_fields_gives_reference_or_input_error(data):
    text = _toml_or_none(data)
    assume(text is not None)
    result = _only_input_error(_load_settings_bytes, text.encode())
    assert result is None or isinstance(result, Reference)


@FUZZ
@given(st.binary(max_size=2000))
def test_settings_file_from_raw_bytes_gives_reference_or_input_error(data):
    result = _only_input_error(_load_settings_bytes, data)
    assert result is None or isinstance(result, Reference)


def test_deeply_nested_settings_file_is_an_input_error():
    data = ("agents = " + "[" * 5000 + "]" * 5000).encode()
    assert _only_input_error(_load_settings_bytes, data) is None
