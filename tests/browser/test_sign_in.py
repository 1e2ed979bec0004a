"""Sign-in in a real browser: a forged identity header is ignored, a configured one signs the user in."""

from __future__ import annotations

import pytest

from tests.browser.actions import WAIT_MS, dashboard, wait_idle

pytestmark = pytest.mark.browser


EDITOR = "lead@fernhollow.example"


def _sidebar_text(pg) -> str:
    return pg.locator('[data-testid="stSidebar"]').inner_text()


def _open_reference(pg, url: str) -> None:
    pg.goto(url + "/reference")
    pg.get_by_text("Your values").first.wait_for()
    wait_idle(pg)


def test_a_forged_identity_header_is_ignored_where_header_sign_in_is_not_configured(browser, app_url):
    # The module's app has no sign-in configured: a header naming an editor changes nothing.
    context = browser.new_context(
        viewport={"width": 1400, "height": 1000},
        extra_http_headers={"X-Remote-User": EDITOR, "X-Forwarded-User": EDITOR},
    )
    pg = context.new_page()
    pg.set_default_timeout(WAIT_MS)
    try:
        _open_reference(pg, app_url)
        sidebar = _sidebar_text(pg)
        assert "Not signed in" in sidebar and EDITOR not in sidebar
        assert "This server has no sign-in" in sidebar
    finally:
        context.close()


def test_the_configured_header_signs_the_user_in_and_only_editors_may_change_values(browser, tmp_path):
    secrets = tmp_path / "secrets.toml"
    secrets.write_text(
        f'[gas_ledger]\nsign_in = "header"\nidentity_header = "X-Remote-User"\neditors = ["{EDITOR}"]\n',
        encoding="utf-8",
    )
    with dashboard(
        tmp_path / "store.sqlite3", tmp_path / "streamlit.log", extra_args=("--secrets.files", str(secrets))
    ) as (url, _):
        url = url.rstrip("/")
        seen = {}
        for who, headers in [
            ("editor", {"X-Remote-User": EDITOR}),
            ("other", {"X-Remote-User": "anaesthetist@fernhollow.example"}),
            ("nobody", {}),
        ]:
            context = browser.new_context(viewport={"width": 1400, "height": 1000}, extra_http_headers=headers)
            pg = context.new_page()
            pg.set_default_timeout(WAIT_MS)
            try:
                _open_reference(pg, url)
                save = pg.locator('button[data-testid^="stBaseButton"]').filter(has_text="Save my values").first
                seen[who] = (_sidebar_text(pg), save.is_disabled())
            finally:
                context.close()
    assert f"Signed in as {EDITOR} (editor" in seen["editor"][0] and not seen["editor"][1]
    assert "Signed in as anaesthetist@fernhollow.example (may save plans)" in seen["other"][0]
    assert seen["other"][1]
    assert "Not signed in" in seen["nobody"][0] and seen["nobody"][1]
