"""Sign-in, editors and authorship: the pure rules of model.store.access (the pages: tests/ui_pages/test_sign_in.py)."""

from __future__ import annotations

import pytest

from model.base.errors import InputError
from model.store.access import (
    NO_ONE,
    AccessConfig,
    User,
    access_config,
    command_line_author,
    is_editor,
    may_edit_reference,
    may_save,
    user_from_header,
    user_from_sign_in,
)

EDITOR = "lead@fernhollow.example"


ANAESTHETIST = "anaesthetist@fernhollow.example"


HEADER = access_config({"sign_in": "header", "identity_header": "X-Remote-User", "editors": [EDITOR]})


SIGN_IN = access_config({"sign_in": "streamlit", "editors": [EDITOR.upper()]})


def test_no_configuration_means_sign_in_off():
    assert access_config(None) == AccessConfig() and not AccessConfig().enabled
    assert access_config({}).sign_in == "off"


@pytest.mark.parametrize(
    "data, names",
    [
        ({"sign_in": "ldap"}, "sign_in"),
        ({"sign_in": "header"}, "identity_header"),  # header mode needs its header
        ({"sign_in": "header", "identity_header": "X User"}, "identity_header"),
        ({"editors": "lead@fernhollow.example"}, "editors"),  # a list, not one text
        ({"editors": [""]}, "editors"),
        ({"sign_in": "off", "editor": []}, "editor"),  # a misspelt key is named
    ],
)
def test_a_wrong_configuration_is_one_message_naming_the_key(data, names):
    with pytest.raises(InputError, match=names):
        access_config(data)


def test_the_configured_header_signs_the_user_in():
    user = user_from_header(HEADER, [EDITOR])
    assert user.signed_in and user.id == EDITOR and user.label == EDITOR


@pytest.mark.parametrize("config", [AccessConfig(), SIGN_IN])
def test_a_forged_header_is_ignored_where_header_sign_in_is_not_configured(config):
    assert user_from_header(config, [EDITOR]) == NO_ONE
    assert not may_edit_reference(config, user_from_header(config, [EDITOR])).allowed or not config.enabled


@pytest.mark.parametrize("values", [[], [""], ["  "], [EDITOR, "someone.else"], ["a\nb"], ["x" * 201]])
def test_a_missing_repeated_or_malformed_header_signs_no_one_in(values):
    # A header sent twice means the proxy appended to what the browser sent: trust neither.
    assert user_from_header(HEADER, values) == NO_ONE


def test_streamlit_sign_in_needs_is_logged_in_and_an_email_or_subject():
    assert user_from_sign_in(SIGN_IN, {"email": EDITOR}) == NO_ONE  # AppTest's default user
    assert user_from_sign_in(SIGN_IN, {"is_logged_in": False, "email": EDITOR}) == NO_ONE
    assert user_from_sign_in(HEADER, {"is_logged_in": True, "email": EDITOR}) == NO_ONE
    user = user_from_sign_in(SIGN_IN, {"is_logged_in": True, "email": EDITOR, "name": "A. Lead"})
    assert user.id == EDITOR and user.label == f"A. Lead <{EDITOR}>"
    assert user_from_sign_in(SIGN_IN, {"is_logged_in": True, "sub": "12345"}).id == "12345"


def test_with_sign_in_off_everyone_may_do_everything_as_today():
    assert may_edit_reference(AccessConfig(), NO_ONE).allowed and may_save(AccessConfig(), NO_ONE).allowed


def test_only_editors_change_reference_values_and_everyone_signed_in_saves():
    editor, other = User(EDITOR.title()), User(ANAESTHETIST)
    assert is_editor(SIGN_IN, editor)  # e-mail addresses compare without case
    assert may_edit_reference(SIGN_IN, editor).allowed
    refused = may_edit_reference(SIGN_IN, other)
    assert not refused.allowed and ANAESTHETIST in refused.reason and "editors" in refused.reason
    assert not may_edit_reference(SIGN_IN, NO_ONE).allowed
    assert may_save(SIGN_IN, other).allowed and not may_save(SIGN_IN, NO_ONE).allowed


def test_the_command_line_is_the_author_of_its_saves():
    assert command_line_author().startswith("command line")
