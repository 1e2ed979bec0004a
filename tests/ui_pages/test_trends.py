"""AppTest of the Trends page on the demo records (their invented programme starts 2026-01)."""

from __future__ import annotations

from tests.helpers.pages import page


def _texts(at) -> str:
    return " ".join(m.value.replace("\\", "") for m in at.markdown)


def test_demo_trends_show_charts_signals_and_the_programme_effect():
    at = page("trends.py")
    assert at.title[0].value == "Trends"
    assert len(at.get("plotly_chart")) == 4
    text = _texts(at)
    assert "Western Electric" in text
    assert "level change at the programme start" in text and "saved" in text
    assert not at.error


def test_no_change_date_removes_the_effect_and_shows_both_runs():
    at = page("trends.py")
    at.text_input(key="tr_change").set_value("").run()
    assert not at.exception
    text = _texts(at)
    assert "level change" not in text
    assert "2025-04 to 2025-12" in text and "2026-01 to 2026-11" in text


def test_a_bad_change_date_is_one_message():
    at = page("trends.py")
    at.text_input(key="tr_change").set_value("2031-05").run()
    assert not at.exception
    errors = [e.value.replace("\\", "") for e in at.error]
    assert len(errors) == 1 and "Programme start" in errors[0] and "2031-05" in errors[0]


def test_theatres_each_have_a_series():
    at = page("trends.py")
    at.selectbox(key="tr_level").set_value("theatre").run()
    assert not at.exception
    assert "Alder" in at.selectbox(key="tr_group").options
    assert len(at.get("plotly_chart")) == 4
