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
    identity_key,
    is_editor,
    may_edit_reference,
    may_save,
    sign_in_refusal,
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


# ---- identities are compared exactly: confusable spellings of an editor sign no one in ------
# The characters are the Unicode Standard's own (UnicodeData.txt and CaseFolding.txt):
# U+00DF folds to "ss", U+017F to "s", U+FB01 to "fi", U+212A (KELVIN SIGN) to "k".

GROSS = "gross@fernhollow.example"
CONFUSABLE = [
    pytest.param(GROSS, "gro\u00df@fernhollow.example", id="sharp-s-U+00DF"),
    pytest.param("sam@fernhollow.example", "\u017fam@fernhollow.example", id="long-s-U+017F"),
    pytest.param("fiona@fernhollow.example", "\ufb01ona@fernhollow.example", id="ligature-fi-U+FB01"),
    pytest.param("kate@fernhollow.example", "\u212aate@fernhollow.example", id="kelvin-sign-U+212A"),
]


@pytest.mark.parametrize("editor, lookalike", CONFUSABLE)
@pytest.mark.parametrize("mode", ["header", "streamlit"])
def test_an_identity_that_only_looks_like_an_editor_is_not_one_and_signs_no_one_in(mode, editor, lookalike):
    config = access_config(
        {"sign_in": mode, "identity_header": "X-Remote-User" if mode == "header" else "", "editors": [editor]}
    )
    if mode == "header":
        user = user_from_header(config, [lookalike])
    else:
        user = user_from_sign_in(config, {"is_logged_in": True, "email": lookalike})
    assert user == NO_ONE
    assert not is_editor(config, User(lookalike))  # even if some other path let it through
    assert not may_edit_reference(config, user).allowed
    assert sign_in_refusal(config, lookalike)
    # The editor's own spelling, in any ASCII case, still is the editor.
    assert is_editor(config, user_from_header(config, [editor.upper()]) if mode == "header" else User(editor.upper()))


def test_a_latin1_byte_in_the_header_is_not_taken_for_ss():
    # Streamlit's server (starlette) decodes header bytes as Latin-1
    # (starlette.datastructures.Headers.getlist: value.decode("latin-1")), and
    # st.context.headers is built from those values (streamlit.runtime.context.StreamlitHeaders):
    # the byte 0xDF arrives as U+00DF, which case folding would read as "ss".
    from starlette.datastructures import Headers
    from streamlit.runtime.context import StreamlitHeaders

    raw = Headers(raw=[(b"x-remote-user", b"gro\xdf@fernhollow.example")])
    headers = StreamlitHeaders(raw.items())
    config = access_config({"sign_in": "header", "identity_header": "X-Remote-User", "editors": [GROSS]})
    values = headers.get_all("X-Remote-User")
    assert values == ["gro\u00df@fernhollow.example"]
    assert user_from_header(config, values) == NO_ONE


def test_a_non_editor_with_a_distinct_non_ascii_name_signs_in_but_is_no_editor():
    config = access_config({"sign_in": "header", "identity_header": "X-Remote-User", "editors": [GROSS]})
    user = user_from_header(config, ["gr\u00fcn@fernhollow.example"])
    assert user.signed_in and not is_editor(config, user)
    assert identity_key("Gro\u00df@X.example") == "gro\u00df@x.example"  # only A-Z are lower-cased


def test_an_editor_entry_that_is_not_nfc_is_a_configuration_error():
    with pytest.raises(InputError, match="editors"):
        access_config({"sign_in": "streamlit", "editors": ["\u212aate@fernhollow.example"]})


@pytest.mark.parametrize(
    "value",
    [
        EDITOR + "\u0085",  # NEL, a C1 control that str.strip() removes
        EDITOR + "\u00a0",  # no-break space
        "\u00a0" + EDITOR,
        EDITOR + "\u2028",  # line separator
        EDITOR + "\u200b",  # zero-width space
        EDITOR + "\u009b",  # CSI, C1
        EDITOR + " ",  # trailing space: refused, not stripped
        "lead\u00a0@fernhollow.example",
    ],
)
def test_a_header_with_a_control_or_odd_space_is_refused_not_stripped(value):
    assert user_from_header(HEADER, [value]) == NO_ONE
    assert user_from_sign_in(SIGN_IN, {"is_logged_in": True, "email": value}) == NO_ONE
    assert sign_in_refusal(HEADER, value)
