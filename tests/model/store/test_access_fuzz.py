"""Fuzzed identities: look-alikes of an editor, Latin-1 header bytes, controls and odd spaces.

Invariants: never an exception; an identity is an editor's only when it is the same text
but for the case of A-Z (checked with ``bytes.lower``, which lower-cases ASCII only, an
independent computation); a look-alike, or a value with a control character or odd space,
signs no one in.
"""

from __future__ import annotations

from hypothesis import given, settings
from hypothesis import strategies as st

from model.store.access import NO_ONE, access_config, is_editor, may_edit_reference, user_from_header, user_from_sign_in
from tests.helpers.fuzz import (
    FUZZ,
    editor_addresses,
    latin1_header_value,
    lookalike_of,
    with_header_control,
)

IDENTITIES = settings(FUZZ, max_examples=300)


def _configs(editor: str):
    header = access_config({"sign_in": "header", "identity_header": "X-Remote-User", "editors": [editor]})
    sign_in = access_config({"sign_in": "streamlit", "editors": [editor]})
    return header, sign_in


def _same_but_ascii_case(a: str, b: str) -> bool:
    return a.encode("utf-8").lower() == b.encode("utf-8").lower()


def _both_ways(editor: str, value: str):
    header, sign_in = _configs(editor)
    by_header = user_from_header(header, [value])
    by_sign_in = user_from_sign_in(sign_in, {"is_logged_in": True, "email": value})
    return (header, by_header), (sign_in, by_sign_in)


@IDENTITIES
@given(st.data())
def test_a_lookalike_of_an_editor_is_never_an_editor_and_signs_no_one_in(data):
    editor = data.draw(editor_addresses())
    value = data.draw(lookalike_of(editor))
    for config, user in _both_ways(editor, value):
        if _same_but_ascii_case(value, editor):
            assert is_editor(config, user)
        else:
            assert user == NO_ONE
            assert not may_edit_reference(config, user).allowed


@IDENTITIES
@given(st.data())
def test_latin1_header_bytes_never_make_an_editor(data):
    editor = data.draw(editor_addresses())
    value = data.draw(latin1_header_value(editor))
    for config, user in _both_ways(editor, value):
        assert is_editor(config, user) == (user.signed_in and _same_but_ascii_case(user.id, editor))
        assert not is_editor(config, user)  # a byte was put in: never the editor's text


@IDENTITIES
@given(st.data())
def test_a_value_with_a_control_or_odd_space_signs_no_one_in(data):
    editor = data.draw(editor_addresses())
    value = data.draw(with_header_control(data.draw(st.sampled_from([editor, "someone@fernhollow.example"]))))
    for _config, user in _both_ways(editor, value):
        assert user == NO_ONE


@IDENTITIES
@given(st.text(max_size=60), editor_addresses())
def test_any_header_text_signs_in_only_as_itself_and_is_an_editor_only_as_the_editor(value, editor):
    for config, user in _both_ways(editor, value):
        if user.signed_in:
            assert user.id == value and value.isprintable() and value == value.strip(" ")
        assert is_editor(config, user) == (user.signed_in and _same_but_ascii_case(value, editor))
