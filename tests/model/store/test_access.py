"""Sign-in, editors and authorship: the pure rules (model.store.access, model.store.changelog) and the
pages with Streamlit's AppTest (a signed-in user is seeded as ``st.user``).
"""

from __future__ import annotations

import pytest
from pagetest import ROOT, TIMEOUT, isolated_store  # noqa: F401  (isolated_store: autouse fixture)
from streamlit.testing.v1 import AppTest
from streamlit.testing.v1.errors import AppTestError

from model.base.errors import InputError
from model.reference import DEFAULT_REFERENCE
from model.store import Store
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
from model.store.changelog import default_value, reference_changes, shown

EDITOR = "lead@fernhollow.example"
ANAESTHETIST = "anaesthetist@fernhollow.example"
HEADER = access_config({"sign_in": "header", "identity_header": "X-Remote-User", "editors": [EDITOR]})
SIGN_IN = access_config({"sign_in": "streamlit", "editors": [EDITOR.upper()]})


# ---- the configuration -----------------------------------------------------------------


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


# ---- identity by header ----------------------------------------------------------------


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


# ---- identity by Streamlit's sign-in ---------------------------------------------------


def test_streamlit_sign_in_needs_is_logged_in_and_an_email_or_subject():
    assert user_from_sign_in(SIGN_IN, {"email": EDITOR}) == NO_ONE  # AppTest's default user
    assert user_from_sign_in(SIGN_IN, {"is_logged_in": False, "email": EDITOR}) == NO_ONE
    assert user_from_sign_in(HEADER, {"is_logged_in": True, "email": EDITOR}) == NO_ONE
    user = user_from_sign_in(SIGN_IN, {"is_logged_in": True, "email": EDITOR, "name": "A. Lead"})
    assert user.id == EDITOR and user.label == f"A. Lead <{EDITOR}>"
    assert user_from_sign_in(SIGN_IN, {"is_logged_in": True, "sub": "12345"}).id == "12345"


# ---- permissions -----------------------------------------------------------------------


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


# ---- the change log --------------------------------------------------------------------


def test_change_log_lists_each_value_from_what_to_what(isolated_store):
    s = Store(isolated_store)
    s.save_overrides({"prices": {"oxygen_per_1000_l": 3.0}}, author="a")
    s.save_overrides({"prices": {"oxygen_per_1000_l": 4.0}, "agents": {"sevoflurane": {"mac40": 2.1}}}, author="b")
    s.save_overrides({}, note="back to built-in defaults", author="a")
    rows = [(c.version, c.author, c.path, c.old, c.new) for c in reference_changes(s.history("overrides", "dashboard"))]
    assert rows == [
        (3, "a", "agents.sevoflurane.mac40", 2.1, None),
        (3, "a", "prices.oxygen_per_1000_l", 4.0, None),
        (2, "b", "agents.sevoflurane.mac40", None, 2.1),
        (2, "b", "prices.oxygen_per_1000_l", 3.0, 4.0),
        (1, "a", "prices.oxygen_per_1000_l", None, 3.0),
    ]
    assert default_value(DEFAULT_REFERENCE, "agents.sevoflurane.mac40") == DEFAULT_REFERENCE.agents["sevoflurane"].mac40
    assert default_value(DEFAULT_REFERENCE, "gwp.user.sevoflurane") is None
    # The currency label is text, not a number.
    assert (
        shown(DEFAULT_REFERENCE, "prices.currency", None) == f"{DEFAULT_REFERENCE.prices.currency} (built-in default)"
    )
    assert shown(DEFAULT_REFERENCE, "prices.currency", "EUR") == "EUR"
    assert shown(DEFAULT_REFERENCE, "gwp.user.sevoflurane", None) == "none (built-in default)"


# ---- the pages ---------------------------------------------------------------------------


def _plain(markdown: str) -> str:
    """Text shown by markdown with the escapes of ui.md taken out."""
    return markdown.replace("\\", "")


def _change_log(at: AppTest):
    return next(d.value for d in at.dataframe if {"by", "from", "to"} <= set(d.value.columns))


def _page(name: str, email: str | None, config: dict | None = None) -> AppTest:
    at = AppTest.from_file(str(ROOT / "pages" / name), default_timeout=TIMEOUT)
    at.secrets["gas_ledger"] = config or {"sign_in": "streamlit", "editors": [EDITOR]}
    at.user = {"is_logged_in": True, "email": email} if email else {"is_logged_in": False}
    at.run()
    assert not at.exception, [e.message for e in at.exception]
    return at


def test_a_user_who_is_not_an_editor_sees_reference_values_read_only(isolated_store):
    at = _page("reference.py", ANAESTHETIST)
    box = at.number_input(key="ref_bottle_sevoflurane")
    assert box.disabled
    assert any("not on the list" in i.value for i in at.info)
    assert next(b for b in at.button if b.label == "Save my values").disabled
    with pytest.raises(AppTestError, match="disabled"):  # as in a browser: the box takes no value
        box.set_value(999.0)
    assert Store(isolated_store).count_versions("overrides") == 0
    assert any(ANAESTHETIST in _plain(c.value) and "may save plans" in c.value for c in at.sidebar.caption)


def test_an_editor_changes_a_value_and_the_change_log_shows_author_old_and_new(isolated_store):
    at = _page("reference.py", EDITOR)
    box = at.number_input(key="ref_bottle_sevoflurane")
    assert not box.disabled
    old = box.value
    box.set_value(240.0)
    next(b for b in at.button if b.label == "Save my values").click()
    at.run()
    assert not at.exception
    saved = Store(isolated_store).get("overrides", "dashboard")
    assert saved.author == EDITOR
    log = _change_log(at)
    row = log[log["value"] == "prices.bottle.sevoflurane"].iloc[0]
    assert row["by"] == EDITOR and row["to"] == "240"
    assert row["from"] == f"{old:g} (built-in default)"
    assert any(EDITOR in _plain(c.value) for c in at.caption)  # "In use: version 1, ... by ..."


def test_without_sign_in_configured_the_page_says_not_signed_in_and_works_as_before(isolated_store):
    at = AppTest.from_file(str(ROOT / "pages" / "reference.py"), default_timeout=TIMEOUT)
    at.run()
    assert not at.number_input(key="ref_bottle_sevoflurane").disabled
    assert any(c.value.startswith("Not signed in") for c in at.sidebar.caption)
    at.number_input(key="ref_bottle_sevoflurane").set_value(200.0)
    next(b for b in at.button if b.label == "Save my values").click()
    at.run()
    log = _change_log(at)
    assert list(log["by"]) == ["not signed in"]


def test_a_signed_out_user_cannot_save_a_plan_and_a_signed_in_one_is_its_author(isolated_store):
    out = _page("case_plan.py", None)
    save = next(b for b in out.button if b.label == "Save")
    assert save.disabled
    assert any("Sign in to save" in c.value for c in out.caption)
    at = _page("case_plan.py", ANAESTHETIST)
    next(b for b in at.button if b.label == "Save").click()
    at.run()
    assert not at.exception
    name = at.text_input(key="cp_name").value
    assert Store(isolated_store).get("plan", name).author == ANAESTHETIST


def test_a_wrong_configuration_locks_changes_with_one_message(isolated_store):
    at = _page("reference.py", EDITOR, {"sign_in": "kerberos", "editors": [EDITOR]})
    assert at.number_input(key="ref_bottle_sevoflurane").disabled
    assert any("misconfigured" in e.value and "kerberos" in e.value for e in at.sidebar.error)


def test_a_signed_out_user_cannot_save_a_year_and_a_signed_in_one_is_its_author(isolated_store):
    """Everyone signed in may save scenarios; with sign-in on, no one else (issue: a shared server)."""
    out = _page("department_year.py", None)
    assert out.button(key="dy_save_btn").disabled
    assert any("Sign in to save" in c.value for c in out.caption)
    at = _page("department_year.py", ANAESTHETIST)
    next(t for t in at.text_input if t.label == "Save as").set_value("Fernhollow year, signed").run()
    at.button(key="dy_save_btn").click().run()
    assert not at.exception, [e.message for e in at.exception]
    store = Store(isolated_store)
    assert store.get("scenario", "Fernhollow year, signed").author == ANAESTHETIST
    assert store.get("casemix", "Fernhollow year, signed").author == ANAESTHETIST
