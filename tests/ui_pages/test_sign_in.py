"""Sign-in on the pages (AppTest; a signed-in user is seeded as ``st.user``): who may change what, who is the author."""

from __future__ import annotations

import pytest
from streamlit.testing.v1 import AppTest
from streamlit.testing.v1.errors import AppTestError

from model.store import Store
from tests.helpers import ROOT
from tests.helpers.pages import TIMEOUT

EDITOR = "lead@fernhollow.example"
ANAESTHETIST = "anaesthetist@fernhollow.example"


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


def test_a_lookalike_of_an_editor_is_not_signed_in_and_the_sidebar_says_why(isolated_store):
    # U+212A KELVIN SIGN folds to "k" (Unicode CaseFolding.txt): "\u212aate" is not "kate".
    config = {"sign_in": "streamlit", "editors": ["kate@fernhollow.example"]}
    at = _page("reference.py", "\u212aate@fernhollow.example", config)
    assert at.number_input(key="ref_bottle_sevoflurane").disabled
    assert any("Not signed in" in w.value and "NFC" in w.value for w in at.sidebar.warning)
    at = _page("reference.py", "\u017fam@fernhollow.example", {**config, "editors": ["sam@fernhollow.example"]})
    assert at.number_input(key="ref_bottle_sevoflurane").disabled
    assert any("looks like an editor" in w.value for w in at.sidebar.warning)
